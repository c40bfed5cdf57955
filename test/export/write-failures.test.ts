/**
 * An export that cannot be written says why (the disk is full, permission denied) with the
 * original error's code kept, leaves no file behind, and leaves the database connection free:
 * the writer stops reading before the error reaches the caller, who then closes the connection.
 * Before, an XLSX export hid the reason behind "This database connection is busy executing a
 * query" (exit 1).
 *
 * In process with a stream that fails like a full disk (runs anywhere); then for real (needs
 * root): in process onto a tmpfs of 64 KiB with a live cursor, and through the CLI onto a tmpfs
 * of 16 KiB and as the user "nobody" into a folder only root may write.
 */
import BetterSqlite3 from 'better-sqlite3';
import { spawnSync } from 'node:child_process';
import { chmodSync, copyFileSync, createWriteStream, mkdirSync, mkdtempSync, readdirSync, rmSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { fileURLToPath } from 'node:url';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { InputError } from '../../src/errors.js';
import { nodeFileOperations } from '../../src/export/atomic-file.js';
import { exportSource } from '../../src/export/export-run.js';
import type { ExportCustomerRow } from '../../src/export/source.js';
import { importFile } from '../../src/ingest/import-file.js';
import { runMonth } from '../support/core-calls.js';
import { openDatabase } from '../../src/store/database.js';
import { customer, memorySource } from './memory-source.js';

const projectRoot = fileURLToPath(new URL('../..', import.meta.url));
const sampleDir = fileURLToPath(new URL('../../demo-data/sample/', import.meta.url));

/** A source whose customers come from a live SQLite cursor, as a stored run's do. */
function cursorSource(db: BetterSqlite3.Database) {
  const rows = Array.from({ length: 3000 }, (_, index) => customer(`C${String(index).padStart(5, '0')}`));
  db.exec('CREATE TABLE rows (id TEXT)');
  const insert = db.prepare('INSERT INTO rows VALUES (?)');
  for (const row of rows) insert.run(row.customerId);
  const byId = new Map(rows.map((row) => [row.customerId, row]));
  return {
    ...memorySource({ customers: rows }),
    customers: function* (): Generator<ExportCustomerRow> {
      for (const { id } of db.prepare('SELECT id FROM rows ORDER BY id').iterate() as Iterable<{ id: string }>) yield byId.get(id)!;
    },
  };
}

/** File operations whose stream fails like a full disk once `limit` bytes are written. */
function fullDiskAfter(limit: number) {
  return {
    ...nodeFileOperations,
    createStream: (path: string) => {
      const stream = createWriteStream(path, { flags: 'wx' });
      let written = 0;
      const write = stream._write.bind(stream);
      stream._write = (chunk: Buffer, encoding, callback) => {
        written += chunk.length;
        if (written > limit) callback(Object.assign(new Error('ENOSPC: no space left on device, write'), { code: 'ENOSPC', errno: -28, syscall: 'write' }));
        else write(chunk, encoding, callback);
      };
      return stream;
    },
  };
}

describe('a disk that fills up during the export (in process)', () => {
  for (const format of ['xlsx', 'csv'] as const) {
    it(`${format.toUpperCase()}: says the disk is full, keeps the error code, leaves no file, frees the connection`, async () => {
      const folder = mkdtempSync(join(tmpdir(), 'spendmix-full-'));
      const db = new BetterSqlite3(':memory:');
      const out = join(folder, `list.${format}`);
      const failure = await exportSource(cursorSource(db), { out, files: fullDiskAfter(20_000) }).catch((error: unknown) => error);
      expect(failure).toBeInstanceOf(InputError);
      expect((failure as Error).message).toBe(`${out} cannot be written: the disk is full.`);
      expect(failure).toMatchObject({ code: 'ENOSPC', cause: { code: 'ENOSPC' } });
      expect(() => db.close()).not.toThrow();
      expect(readdirSync(folder)).toEqual([]);
    });
  }
});

const isRoot = process.getuid?.() === 0;

describe.skipIf(!isRoot)('real failures through the CLI (needs root: mounts a tmpfs, runs as "nobody")', () => {
  const folder = mkdtempSync(join(tmpdir(), 'spendmix-export-fail-'));
  const dbPath = join(folder, 'larkmoor.db');
  const full = join(folder, 'full');
  const fullForCursor = join(folder, 'full-64k');
  let mounted = false;

  beforeAll(async () => {
    const db = openDatabase(dbPath);
    for (const kind of ['customers', 'receipts', 'visits'] as const) await importFile(db, { path: join(sampleDir, `${kind}.csv`), kind, options: { reportDir: folder } });
    await runMonth(db, { asOf: '2026-11-30', windowMonths: 12, mode: 'refit', k: 3, covariance: 'diag', restarts: 1, seed: 3 });
    db.close();
    mkdirSync(full);
    mkdirSync(fullForCursor);
    const mount = spawnSync('mount', ['-t', 'tmpfs', '-o', 'size=16k', 'tmpfs', full], { encoding: 'utf8' });
    mounted = mount.status === 0 && spawnSync('mount', ['-t', 'tmpfs', '-o', 'size=64k', 'tmpfs', fullForCursor]).status === 0;
    // A container without the right to mount: the full-disk cases are skipped, saying why.
    if (!mounted) console.warn(`Full-disk cases skipped: mounting a 16 KiB tmpfs failed: ${mount.stderr.trim()}`);
  });

  afterAll(() => {
    for (const mountPoint of [full, fullForCursor]) spawnSync('umount', [mountPoint]);
    rmSync(folder, { recursive: true, force: true });
  });

  const cli = (args: string[], asNobody = false) => {
    const command = [process.execPath, '--import', 'tsx', 'src/cli/main.ts', ...args];
    const [program, ...rest] = asNobody ? ['setpriv', '--reuid=65534', '--regid=65534', '--clear-groups', ...command] : command;
    return spawnSync(program, rest, { cwd: projectRoot, encoding: 'utf8', timeout: 120_000, env: { ...process.env, HOME: tmpdir() } });
  };

  it('XLSX onto a real full disk while a cursor is open (in process): the disk is full, and the connection closes', async (context) => {
    if (!mounted) context.skip();
    const db = new BetterSqlite3(':memory:');
    const out = join(fullForCursor, 'list.xlsx');
    const failure = await exportSource(cursorSource(db), { out }).catch((error: unknown) => error);
    expect((failure as Error).message).toBe(`${out} cannot be written: the disk is full.`);
    // Before, the writer still held the cursor here: "This database connection is busy executing a query".
    expect(() => db.close()).not.toThrow();
    expect(readdirSync(fullForCursor)).toEqual([]);
  });

  for (const format of ['xlsx', 'csv'] as const) {
    it(`${format.toUpperCase()} onto a full disk: exit 2, "the disk is full", nothing left on the disk`, (context) => {
      if (!mounted) context.skip();
      const out = join(full, `run.${format}`);
      const result = cli(['export', '--db', dbPath, '--run', 'latest', '--out', out]);
      expect(result.stderr).toBe(`spendmix: ${out} cannot be written: the disk is full.\n`);
      expect(result.status).toBe(2);
      expect(readdirSync(full)).toEqual([]);
    });

    it(`${format.toUpperCase()} into a folder the user may not write: exit 2, "permission denied"`, () => {
      const shared = mkdtempSync(join(tmpdir(), 'spendmix-nobody-'));
      chmodSync(shared, 0o777);
      const copy = join(shared, 'copy.db');
      copyFileSync(dbPath, copy);
      chmodSync(copy, 0o666);
      const locked = join(shared, 'locked');
      mkdirSync(locked, { mode: 0o755 });
      const out = join(locked, `run.${format}`);
      const result = cli(['export', '--db', copy, '--run', 'latest', '--out', out], true);
      expect(result.stderr).toBe(`spendmix: ${out} cannot be written: permission denied, or the file is open in another program (close it there and export again).\n`);
      expect(result.status).toBe(2);
      expect(readdirSync(locked)).toEqual([]);
      rmSync(shared, { recursive: true, force: true });
    });
  }
});
