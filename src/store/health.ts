import type { Database } from 'better-sqlite3';
import { closeSync, existsSync, fstatSync, openSync, readdirSync, readSync, statSync } from 'node:fs';
import { basename, dirname, join, resolve } from 'node:path';
import { InputError, damagedDatabaseAdvice } from '../errors.js';

/**
 * Databases up to this size get SQLite's `PRAGMA quick_check` (every page of every table and
 * index read and its structure verified) each time they are opened for work; larger ones get the
 * file-header checks only, because quick_check costs O(file size): at 1 M customers / 20 M
 * receipts it costs many times an open and a plain count (test/bench/health-check.ts; figures in
 * the README). SQLite still refuses damaged pages it meets while working, with the same advice.
 */
export const FULL_CHECK_MAX_BYTES = 256 * 1024 * 1024;

/** At most this many of quick_check's findings go into the message. */
const REPORTED_FINDINGS = 3;

const SQLITE_MAGIC = 'SQLite format 3\0';

/**
 * Problems of the 100-byte file header and the file's length (SQLite file format, section 1.3,
 * from memory): the magic string, a page size that is a power of two from 512 to 65536, the fixed
 * payload fractions, and, when no journal holds changes, a length that is whole pages and (when
 * the header's page count is current) not shorter than that count. Microseconds whatever the size.
 */
export function headerProblems(path: string): string[] {
  const descriptor = openSync(path, 'r');
  let header: Buffer;
  let fileBytes: number;
  try {
    header = Buffer.alloc(100);
    fileBytes = fstatSync(descriptor).size;
    if (fileBytes === 0) return [];
    readSync(descriptor, header, 0, 100, 0);
  } finally {
    closeSync(descriptor);
  }
  if (fileBytes < 100) return [`the file is ${fileBytes} bytes long, shorter than an SQLite header`];
  if (header.toString('latin1', 0, 16) !== SQLITE_MAGIC) return ['its first bytes are not the SQLite header'];
  const problems: string[] = [];
  const rawPageSize = header.readUInt16BE(16);
  const pageSize = rawPageSize === 1 ? 65536 : rawPageSize;
  if (pageSize < 512 || pageSize > 65536 || (pageSize & (pageSize - 1)) !== 0) problems.push(`the header gives an impossible page size (${rawPageSize})`);
  if (header[21] !== 64 || header[22] !== 32 || header[23] !== 32) problems.push('the header\'s payload fractions are not SQLite\'s fixed values');
  if (problems.length > 0) return problems;
  // While a journal holds changes (an open connection's log, or a writer mid-transaction) the
  // file's length may lawfully differ from the header's count; it must agree once all is written.
  const journalled = ['-wal', '-journal'].some((suffix) => (statSync(`${path}${suffix}`, { throwIfNoEntry: false })?.size ?? 0) > 0);
  if (journalled) return problems;
  if (fileBytes % pageSize !== 0) problems.push(`the file is not a whole number of ${pageSize}-byte pages (${fileBytes} bytes): it was cut short or extended`);
  const headerPages = header.readUInt32BE(28);
  const headerCurrent = header.readUInt32BE(24) === header.readUInt32BE(92) && headerPages > 0;
  // Longer is harmless (SQLite ignores pages past the count, e.g. after a rolled-back load); shorter is lost data.
  if (headerCurrent && headerPages * pageSize > fileBytes) {
    problems.push(`the header counts ${headerPages} pages but the file holds only ${Math.floor(fileBytes / pageSize)}: it was cut short`);
  }
  return problems;
}

/** quick_check's findings ("ok" means none). */
function quickCheckFindings(db: Database): string[] {
  const rows = db.pragma(`quick_check(${REPORTED_FINDINGS + 1})`, { simple: false }) as Array<{ quick_check: string }>;
  return rows
    .flatMap((row) => row.quick_check.split('\n'))
    .map((line) => line.trim())
    .filter((line) => line !== '' && line !== 'ok' && !line.startsWith('*** in database'));
}

/** Copies Spendmix made before a schema upgrade (`<file>.backup-v<N>`), next to the database. */
function backupsBeside(path: string): string[] {
  const name = basename(path);
  try {
    return readdirSync(dirname(path))
      .filter((entry) => entry.startsWith(`${name}.backup-v`))
      .map((entry) => join(dirname(path), entry));
  } catch {
    return [];
  }
}

/**
 * Refuses a damaged database before it is written to or read for an export: the header checks
 * always, and `PRAGMA quick_check` when the file is at most FULL_CHECK_MAX_BYTES. The message
 * says what is wrong and the way out (a backup copy, or the sqlite3 shell's .recover).
 */
export function requireHealthyDatabase(db: Database, given: string): void {
  if (given === '' || given === ':memory:' || !existsSync(given)) return;
  const path = resolve(given);
  const problems = headerProblems(path);
  if (problems.length === 0 && statSync(path).size <= FULL_CHECK_MAX_BYTES) problems.push(...quickCheckFindings(db));
  if (problems.length === 0) return;
  const shown = problems.slice(0, REPORTED_FINDINGS).join('; ');
  throw new InputError(
    `Database ${path} is damaged: ${shown}${problems.length > REPORTED_FINDINGS ? '; and more' : ''}. ${damagedDatabaseAdvice(path, backupsBeside(path))}`,
    { code: 'SQLITE_CORRUPT', problems },
  );
}
