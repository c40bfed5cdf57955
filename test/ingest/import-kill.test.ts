import { spawn } from 'node:child_process';
import { copyFileSync, existsSync, statSync } from 'node:fs';
import { join } from 'node:path';
import { fileURLToPath } from 'node:url';
import { uniformInt } from 'pure-rand/distribution/uniformInt';
import { xoroshiro128plus } from 'pure-rand/generator/xoroshiro128plus';
import { describe, expect, it } from 'vitest';
import { importFile } from '../../src/ingest/import-file.js';
import { openDatabase } from '../../src/store/database.js';
import { writeReceiptsFile } from '../bench/import-receipts-file.js';
import { temporaryFolder } from './support.js';

const projectRoot = fileURLToPath(new URL('../..', import.meta.url));
const childScript = fileURLToPath(new URL('./kill-child.ts', import.meta.url));
const KILLS = 20;

interface ChildRun {
  /** Milliseconds from "started" to the kill or the exit. */
  elapsedMs: number;
  finished: boolean;
  lastMessage: string;
}

/** Runs the child; kills it with SIGKILL `killAfterMs` after it says "started" (never when undefined). */
function runChild(databasePath: string, filePath: string, killAfterMs?: number): Promise<ChildRun> {
  return new Promise((resolve, reject) => {
    const child = spawn(process.execPath, ['--import', 'tsx', childScript, databasePath, filePath], {
      cwd: projectRoot,
      stdio: ['ignore', 'pipe', 'pipe'],
    });
    let startedAt = 0;
    let lastMessage = '';
    let finished = false;
    let stderr = '';
    child.stderr.on('data', (chunk) => (stderr += chunk));
    child.stdout.on('data', (chunk: Buffer) => {
      for (const line of chunk.toString().split('\n').filter(Boolean)) {
        lastMessage = line.split(' ')[0];
        if (line === 'started') {
          startedAt = performance.now();
          if (killAfterMs !== undefined) setTimeout(() => child.kill('SIGKILL'), killAfterMs);
        }
        if (line.startsWith('done ')) finished = true;
      }
    });
    child.on('exit', (code, signal) => {
      if (signal !== 'SIGKILL' && code !== 0) reject(new Error(`child failed (${code}): ${stderr}`));
      else resolve({ elapsedMs: performance.now() - startedAt, finished, lastMessage });
    });
  });
}

describe('crash safety (DESIGN.md §12)', () => {
  it(`an import killed with SIGKILL at ${KILLS} random moments leaves the database as before or as after, never between`, async () => {
    const folder = temporaryFolder('spendmix-kill-');
    const baseline = join(folder, 'baseline.db');
    const monthOne = join(folder, 'month1.csv');
    const bigFile = join(folder, 'big.csv');
    writeReceiptsFile(monthOne, { rows: 2_000, customers: 300, seed: 1 });
    // Receipt numbers after month 1's, so the big file adds all of its rows.
    const big = writeReceiptsFile(bigFile, { rows: 80_000, customers: 5_000, seed: 2, firstReceipt: 10_000 });
    // Big enough for the large-load paths: the rollback journal (≥ 4 MB) and the index rebuild (≥ 50,000 rows).
    expect(statSync(bigFile).size).toBeGreaterThan(4 * 1024 * 1024);
    const db = openDatabase(baseline);
    await importFile(db, { path: monthOne, kind: 'receipts' });
    const before = db.prepare('SELECT count(*) FROM receipts').pluck().get() as number;
    db.close();
    expect(existsSync(`${baseline}-wal`)).toBe(false);
    const after = before + big.rows;

    // Uninterrupted runs give the length of the import to aim the kills at: two at a time, as the
    // kills run, and the quicker of the two, so that a busy machine does not aim the kills past the end.
    const calibrations = await Promise.all(
      [0, 1].map((index) => {
        const path = join(folder, `calibration-${index}.db`);
        copyFileSync(baseline, path);
        return runChild(path, bigFile);
      }),
    );
    expect(calibrations.every((run) => run.finished)).toBe(true);
    const full = { elapsedMs: Math.min(...calibrations.map((run) => run.elapsedMs)) };

    const generator = xoroshiro128plus(4180);
    const outcomes = { before: 0, after: 0, midway: 0 };
    // Two children at a time (two cores): each has its own copy of the baseline database.
    const attempt = async (index: number, killAfterMs: number): Promise<void> => {
      const path = join(folder, `killed-${index}.db`);
      copyFileSync(baseline, path);
      const run = await runChild(path, bigFile, killAfterMs);
      if (!run.finished) outcomes.midway += 1;
      const reopened = openDatabase(path);
      expect(reopened.pragma('integrity_check', { simple: true })).toBe('ok');
      // A load this size runs with a rollback journal; after a kill the hot journal was rolled back and WAL is back.
      expect(reopened.pragma('journal_mode', { simple: true })).toBe('wal');
      const receipts = reopened.prepare('SELECT count(*) FROM receipts').pluck().get() as number;
      const imports = reopened.prepare('SELECT count(*) FROM imports').pluck().get() as number;
      expect([before, after]).toContain(receipts);
      expect(imports).toBe(receipts === after ? 2 : 1);
      // The index dropped for the bulk load is back either way (the DROP was inside the transaction).
      expect(reopened.prepare("SELECT count(*) FROM sqlite_master WHERE name = 'receipts_by_customer_day'").pluck().get()).toBe(1);
      if (receipts === before) outcomes.before += 1;
      else outcomes.after += 1;
      reopened.close();
    };
    // Most kills aimed inside the import; a few just past its end, which must leave it complete.
    const delays = Array.from({ length: KILLS }, (_, index) =>
      uniformInt(generator, 0, Math.round(full.elapsedMs * (index % 5 === 4 ? 1.2 : 0.9))),
    );
    for (let index = 0; index < KILLS; index += 2) {
      await Promise.all(delays.slice(index, index + 2).map((delay, offset) => attempt(index + offset, delay)));
    }
    console.log(
      `kill test: ${KILLS} SIGKILLs over an import of ${big.rows} rows (${Math.round(full.elapsedMs)} ms uninterrupted); ` +
        `${outcomes.midway} landed before the import finished; afterwards ${outcomes.before} databases as before, ${outcomes.after} as after`,
    );
    expect(outcomes.before + outcomes.after).toBe(KILLS);
    // Most kills must land mid-import, or the test proves little.
    expect(outcomes.midway).toBeGreaterThanOrEqual(KILLS / 2);
  }, 240_000);
});
