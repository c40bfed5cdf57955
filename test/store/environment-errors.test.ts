import BetterSqlite3 from 'better-sqlite3';
import { spawnSync } from 'node:child_process';
import { chmodSync, chownSync, copyFileSync, mkdirSync, mkdtempSync, readFileSync, statSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { fileURLToPath } from 'node:url';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { toApiError } from '../../src/api/api-errors.js';
import { reportError } from '../../src/cli/run-command.js';
import { environmentError, InputError } from '../../src/errors.js';
import { sampleDir } from '../runs/demo-database.js';

/**
 * Failures caused by the user's environment — an unreadable input file, a read-only database or
 * read-only -wal/-shm files left beside it, a full disk, a database locked by another program —
 * are exit code 2 with the real reason and what to do (DESIGN.md §12), never "internal error".
 * Permissions are tried for real as the user `nobody` (root passes every permission check) and
 * the full disk is a 2 MiB tmpfs, so those parts need root; the rest runs as anyone.
 */

const projectRoot = fileURLToPath(new URL('../..', import.meta.url));
const asRoot = process.getuid?.() === 0;
const NOBODY = 65534;
let folder: string;
let database: string;

/** The real CLI as a process, as `nobody` when asked. */
function cli(args: string[], as: 'me' | 'nobody' = 'me'): { code: number | null; stdout: string; stderr: string } {
  const node = [process.execPath, join(projectRoot, 'src/cli/bin.mjs'), ...args];
  const [command, ...rest] = as === 'nobody' ? ['runuser', '-u', 'nobody', '--', ...node] : node;
  const run = spawnSync(command, rest, { cwd: folder, encoding: 'utf8', timeout: 180_000, env: { ...process.env, HOME: folder } });
  return { code: run.status, stdout: run.stdout, stderr: run.stderr };
}

/** A copy of the small demo database, owned by `owner`. */
function databaseCopy(name: string, owner: number): string {
  const path = join(folder, name);
  copyFileSync(database, path);
  chownSync(path, owner, owner);
  return path;
}

beforeAll(() => {
  folder = mkdtempSync(join(tmpdir(), 'spendmix-environment-'));
  chmodSync(folder, 0o777);
  database = join(folder, 'demo.db');
  const made = cli(['demo', '--db', database, '--customers', '300', '--json']);
  expect(made.code, made.stderr).toBe(0);
}, 300_000);

afterAll(() => {
  spawnSync('rm', ['-rf', folder]);
});

describe('one classification of environment failures', () => {
  it('maps real SQLite and file-system errors to input errors with the reason and a remedy, and leaves others alone', () => {
    const readonly = new BetterSqlite3(database, { readonly: true });
    let sqliteError: unknown;
    try {
      readonly.exec('CREATE TABLE t (x)');
    } catch (error) {
      sqliteError = error;
    } finally {
      readonly.close();
    }
    let fsError: unknown;
    try {
      readFileSync(join(folder, 'no-such-folder', 'x.csv'), { flag: 'wx' });
    } catch (error) {
      fsError = error;
    }
    const readOnly = environmentError(sqliteError);
    expect(readOnly).toBeInstanceOf(InputError);
    expect(readOnly!.message).toMatch(/^The database cannot be written: .*read-only for this user \(attempt to write a readonly database\)\. Make them writable/);
    expect(readOnly!.details).toEqual({ code: 'SQLITE_READONLY' });
    const full = environmentError(Object.assign(new Error('database or disk is full'), { code: 'SQLITE_FULL' }), 'Database /x.db');
    expect(full!.message).toBe('Database /x.db cannot be written: the disk is full (database or disk is full). Free space on that disk (or use a folder on another disk) and try again.');
    const denied = environmentError(Object.assign(new Error("EACCES: permission denied, open '/data/r.csv'"), { code: 'EACCES', path: '/data/r.csv' }));
    expect(denied!.message).toMatch(/^\/data\/r\.csv cannot be used by this user: permission denied/);
    // Not the environment: a missing folder is reported where it is known; a bug stays internal.
    expect(environmentError(fsError)).toBeNull();
    expect(environmentError(new TypeError('x is undefined'))).toBeNull();
    expect(environmentError(new InputError('already explained'))).toBeNull();

    // The CLI's reporting and the API's mapping both use it.
    let stderr = '';
    expect(reportError({ stdout: () => undefined, stderr: (text) => void (stderr += text) }, false, sqliteError)).toBe(2);
    expect(stderr).toMatch(/^spendmix: The database cannot be written/);
    expect(toApiError(sqliteError)).toMatchObject({ kind: 'input', message: readOnly!.message, details: { code: 'SQLITE_READONLY' } });
    // The XLSX writer hands on the original Node error with its code (a busy connection hid it before).
    expect(toApiError(Object.assign(new Error("ENOSPC: no space left on device, write"), { code: 'ENOSPC' }))).toMatchObject({ kind: 'input', message: expect.stringMatching(/^The disk is full \(ENOSPC: no space left on device, write\)\. Free space/) });
  });

  it('a database locked by another program: exit 2, "locked", not an internal error', () => {
    const path = databaseCopy('locked.db', process.getuid?.() ?? 0);
    const holder = new BetterSqlite3(path);
    holder.exec('BEGIN IMMEDIATE');
    try {
      const run = cli(['import', '--db', path, '--receipts', join(sampleDir, 'receipts.csv')]);
      expect(run.code, run.stderr).toBe(2);
      expect(run.stderr).toMatch(/is locked by another program or Spendmix window \(database is locked\)\. Close it there, or wait/);
    } finally {
      holder.exec('ROLLBACK');
      holder.close();
    }
  }, 120_000);
});

describe.runIf(asRoot)('as another user and on a full disk (root only)', () => {
  it('an input file this user cannot read: exit 2 with the reason, not "internal error: EACCES"', () => {
    const receipts = join(folder, 'private-receipts.csv');
    copyFileSync(join(sampleDir, 'receipts.csv'), receipts);
    chmodSync(receipts, 0o600);
    const run = cli(['import', '--db', join(folder, 'nobody.db'), '--receipts', receipts], 'nobody');
    expect(run.code, run.stderr).toBe(2);
    expect(run.stderr).toBe(
      `spendmix: ${receipts} cannot be used by this user: permission denied (EACCES: permission denied, open '${receipts}'). ` +
        'Check its owner and permissions (ls -l), or choose a file and folder this user may read and write.\n',
    );
  }, 120_000);

  it('a read-only database: refresh refuses at the start with exit 2, naming the file', () => {
    const path = databaseCopy('read-only.db', 0);
    const run = cli(['refresh', '--db', path, '--as-of', '2026-10-31', '--k', '2', '--restarts', '1'], 'nobody');
    expect(run.code, run.stderr).toBe(2);
    expect(run.stderr).toMatch(new RegExp(`^spendmix: Database ${path.replace(/\./g, '\\.')} cannot be written by this user \\(EACCES: permission denied, access`));
    expect(run.stderr).toMatch(/Make it writable by this user/);
  }, 120_000);

  it('read-only -wal/-shm files left beside a writable database: says so, and works once they are writable', () => {
    // Another user's session (root's here) wrote and ended without closing: its -wal and -shm
    // stay behind, owned by that user. Then the database itself is handed to this user.
    const path = databaseCopy('left-over.db', 0);
    const leave = spawnSync(
      process.execPath,
      ['-e', `const D = require('better-sqlite3'); const db = new D(${JSON.stringify(path)}); db.exec('CREATE TABLE left_behind (x); INSERT INTO left_behind VALUES (1)'); process.exit(0);`],
      { cwd: projectRoot, encoding: 'utf8' },
    );
    expect(leave.status, leave.stderr).toBe(0);
    expect(statSync(`${path}-wal`).size).toBeGreaterThan(0);
    chownSync(path, NOBODY, NOBODY);
    const refused = cli(['refresh', '--db', path, '--as-of', '2026-10-31', '--k', '2', '--restarts', '1'], 'nobody');
    expect(refused.code, refused.stderr).toBe(2);
    expect(refused.stderr).toMatch(
      new RegExp(`^spendmix: Database ${path.replace(/\./g, '\\.')} is writable, but left-over\\.db-wal and left-over\\.db-shm beside it are not \\(EACCES`),
    );
    expect(refused.stderr).toMatch(/Make them writable by this user \(chown or chmod; ls -l shows who owns them\).*do not delete the -wal file/);
    chownSync(`${path}-wal`, NOBODY, NOBODY);
    chownSync(`${path}-shm`, NOBODY, NOBODY);
    const fixed = cli(['refresh', '--db', path, '--as-of', '2026-10-31', '--k', '2', '--restarts', '1', '--json'], 'nobody');
    expect(fixed.code, fixed.stderr).toBe(0);
  }, 240_000);

  it('a full disk on import and on refresh: exit 2, "the disk is full", and the database as it was', () => {
    const disk = join(folder, 'small-disk');
    mkdirSync(disk);
    const mount = spawnSync('mount', ['-t', 'tmpfs', '-o', 'size=2m', 'tmpfs', disk], { encoding: 'utf8' });
    expect(mount.status, mount.stderr).toBe(0);
    try {
      const target = join(disk, 'full.db');
      const imported = cli(['import', '--db', target, '--receipts', join(sampleDir, 'receipts.csv')]);
      expect(imported.code, imported.stderr).toBe(2);
      expect(imported.stderr).toMatch(new RegExp(`^spendmix: Database ${target.replace(/\./g, '\\.')} cannot be written: the disk is full \\(database or disk is full\\)\\. Free space`));
      const check = new BetterSqlite3(target, { readonly: true });
      expect(check.prepare('SELECT count(*) AS n FROM receipts').get()).toEqual({ n: 0 });
      check.close();
    } finally {
      spawnSync('umount', [disk]);
    }
    // A disk with the database on it and 40 KiB to spare: the run's results do not fit.
    const mountRefresh = spawnSync('mount', ['-t', 'tmpfs', '-o', 'size=8m', 'tmpfs', disk], { encoding: 'utf8' });
    expect(mountRefresh.status, mountRefresh.stderr).toBe(0);
    try {
      const target = join(disk, 'refresh.db');
      copyFileSync(database, target);
      const free = Number(spawnSync('df', ['-k', '--output=avail', disk], { encoding: 'utf8' }).stdout.trim().split('\n').pop());
      writeFileSync(join(disk, 'filler'), Buffer.alloc(Math.max(0, free - 40) * 1024));
      const refreshed = cli(['refresh', '--db', target, '--as-of', '2026-10-31', '--k', '2', '--restarts', '1']);
      expect(refreshed.code, refreshed.stderr).toBe(2);
      expect(refreshed.stderr).toMatch(/^spendmix: The disk is full \(database or disk is full\)\. Free space on that disk/);
      const check = new BetterSqlite3(target, { readonly: true });
      expect(check.prepare('SELECT count(*) AS n FROM runs').get()).toEqual({ n: 0 });
      check.close();
    } finally {
      spawnSync('umount', [disk]);
    }
  }, 300_000);
});
