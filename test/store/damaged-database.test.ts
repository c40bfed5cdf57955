import { spawnSync } from 'node:child_process';
import { closeSync, copyFileSync, openSync, statSync, truncateSync, writeFileSync, writeSync } from 'node:fs';
import { join } from 'node:path';
import { fileURLToPath } from 'node:url';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { callApiOutcome } from '../../src/api/handlers.js';
import { ApiSession } from '../../src/api/session.js';
import { runCli } from '../../src/cli/program.js';
import { openDatabase } from '../../src/store/database.js';
import { headerProblems } from '../../src/store/health.js';
import { demoDatabase, sampleDir, type DemoDatabase } from '../runs/demo-database.js';

/**
 * A damaged database is noticed before it is written to or read for an export (DESIGN.md §12):
 * 64 KB of the middle of a copy overwritten, as a failing disk or a stray tool would, and import,
 * refresh and export all refuse with exit code 2, the damage and the way out.
 */

const projectRoot = fileURLToPath(new URL('../..', import.meta.url));
let demo: DemoDatabase;

/** The real CLI as a process: its exit code and what it printed. */
function cli(...args: string[]): { code: number | null; stdout: string; stderr: string } {
  const run = spawnSync(process.execPath, [join(projectRoot, 'src/cli/bin.mjs'), ...args], { cwd: projectRoot, encoding: 'utf8', timeout: 120_000 });
  return { code: run.status, stdout: run.stdout, stderr: run.stderr };
}

/** A copy of the demo database with `bytes` at its middle overwritten by pseudo-random bytes. */
function damagedCopy(name: string, bytes = 64 * 1024): string {
  const path = join(demo.folder, name);
  copyFileSync(demo.path, path);
  let state = 12345;
  const noise = Buffer.alloc(bytes);
  for (let i = 0; i < bytes; i++) {
    state = (Math.imul(state, 1103515245) + 12345) >>> 0;
    noise[i] = state >>> 24;
  }
  const descriptor = openSync(path, 'r+');
  writeSync(descriptor, noise, 0, bytes, Math.floor(statSync(path).size / 2));
  closeSync(descriptor);
  return path;
}

beforeAll(async () => {
  demo = await demoDatabase('sample');
  demo.db.close();
  const io = { stdout: () => undefined, stderr: () => undefined };
  expect(await runCli(['refresh', '--db', demo.path, '--as-of', '2026-10-31', '--k', '3', '--covariance', 'diag', '--restarts', '1'], io)).toBe(0);
}, 300_000);

afterAll(() => demo?.close());

describe('a damaged database', () => {
  it('is refused by import, refresh and export with exit code 2, the damage and the way out', () => {
    const damaged = damagedCopy('damaged.db');
    const receipts = join(sampleDir, 'receipts.csv');
    const runs = [
      cli('import', '--db', damaged, '--receipts', receipts),
      cli('refresh', '--db', damaged, '--as-of', '2026-11-30', '--k', '3', '--covariance', 'diag', '--restarts', '1'),
      cli('export', '--db', damaged, '--run', 'latest', '--out', join(demo.folder, 'list.csv'), '--json'),
    ];
    for (const run of runs) {
      expect(run.code, run.stderr).toBe(2);
      expect(run.stdout).toBe('');
      expect(run.stderr).toMatch(new RegExp(`^spendmix: Database ${damaged.replace(/[.]/g, '\\.')} is damaged: Tree \\d+ page \\d+`));
      expect(run.stderr).toMatch(/restore a copy you trust/);
      expect(run.stderr).toContain(`sqlite3 "${damaged}" ".recover" | sqlite3 recovered.db`);
    }
    // Nothing was written next to it: no export, and the damaged file's size is unchanged.
    expect(() => statSync(join(demo.folder, 'list.csv'))).toThrow();
  }, 300_000);

  it('is refused through the API too, and names the backup copy beside it when there is one', async () => {
    const damaged = damagedCopy('damaged-api.db');
    writeFileSync(`${damaged}.backup-v2`, 'a copy made before an upgrade');
    expect(() => new ApiSession({ dbPath: damaged, shell: 'cli' })).toThrow(/is damaged: .*restore a copy you trust: the copy Spendmix made before its last upgrade \(.*damaged-api\.db\.backup-v2\)/s);
    const session = new ApiSession({ shell: 'cli' });
    try {
      const opened = await callApiOutcome(session, 'openDatabase', { path: damaged });
      expect(opened.ok === false && opened.error).toMatchObject({ kind: 'input', message: expect.stringMatching(/is damaged/) });
    } finally {
      await session.close();
    }
  });

  it('is noticed when cut short, by the header checks alone', () => {
    const path = join(demo.folder, 'cut.db');
    copyFileSync(demo.path, path);
    expect(headerProblems(path)).toEqual([]);
    truncateSync(path, statSync(path).size - 1000);
    expect(headerProblems(path)).toEqual([expect.stringMatching(/not a whole number of 4096-byte pages/), expect.stringMatching(/it was cut short$/)]);
    expect(() => openDatabase(path)).toThrow(/is damaged: the file is not a whole number/);
    const notSqlite = join(demo.folder, 'receipts-as-db.db');
    copyFileSync(join(sampleDir, 'receipts.csv'), notSqlite);
    expect(() => openDatabase(notSqlite)).toThrow(/is not an SQLite database, or its first page is damaged \(file is not a database\)\. Check that you named the right file/);
    expect(headerProblems(notSqlite)).toEqual(['its first bytes are not the SQLite header']);
  });

  it('a healthy copy still opens and exports', () => {
    const healthy = join(demo.folder, 'healthy.db');
    copyFileSync(demo.path, healthy);
    const run = cli('export', '--db', healthy, '--run', 'latest', '--out', join(demo.folder, 'healthy.csv'), '--json');
    expect(run.code, run.stderr).toBe(0);
  }, 120_000);
});
