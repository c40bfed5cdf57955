import { statSync } from 'node:fs';
import { join } from 'node:path';
import { describe, expect, it } from 'vitest';
import { CancelledError } from '../../src/errors.js';
import { importFileInput } from '../../src/api/contract.js';
import { runInWorker } from '../../src/api/run-in-worker.js';
import { openDatabase } from '../../src/store/database.js';
import { writeReceiptsFile } from '../bench/import-receipts-file.js';
import { snapshotCounts, temporaryFolder } from '../ingest/support.js';

/**
 * The app's import path: the task's worker thread runs importFile, which for a file this large
 * starts its own parse worker (a worker inside a worker). Same result as in-process, and a cancel
 * mid-file changes nothing.
 */
describe('import through the task worker, with the parse worker inside it', () => {
  const folder = temporaryFolder('spendmix-task-import-');
  const file = join(folder, 'receipts.csv');
  const written = writeReceiptsFile(file, { rows: 90_000, customers: 4_000, seed: 11 });

  it('imports a file large enough for the parse worker and reports progress', async () => {
    expect(statSync(file).size).toBeGreaterThan(4 * 1024 * 1024);
    const dbPath = join(folder, 'whole.db');
    openDatabase(dbPath).close();
    const phases = new Set<string>();
    const result = await runInWorker(
      { method: 'importFile', input: importFileInput.parse({ path: file, kind: 'receipts' }), dbPath },
      { signal: new AbortController().signal, onProgress: (progress) => phases.add(progress.phase) },
    );
    expect(result).toMatchObject({ rowsRead: written.rows, rowsImported: written.rows, rowsRejected: 0, amountTotal: written.amountCents / 100 });
    expect([...phases]).toEqual(expect.arrayContaining(['starting', 'reading', 'indexing', 'done']));
    const db = openDatabase(dbPath);
    expect(db.prepare('SELECT count(*), sum(amount_cents) FROM receipts').raw().get()).toEqual([written.rows, written.amountCents]);
    db.close();
  });

  it('a cancel while rows are being read leaves the database as it was', async () => {
    const dbPath = join(folder, 'cancelled.db');
    const db = openDatabase(dbPath);
    const before = snapshotCounts(db);
    db.close();
    const controller = new AbortController();
    const task = runInWorker(
      { method: 'importFile', input: importFileInput.parse({ path: file, kind: 'receipts' }), dbPath },
      {
        signal: controller.signal,
        onProgress: (progress) => {
          if (progress.phase === 'reading') controller.abort();
        },
      },
    );
    await expect(task).rejects.toBeInstanceOf(CancelledError);
    const reopened = openDatabase(dbPath);
    expect(snapshotCounts(reopened)).toEqual(before);
    expect(reopened.pragma('integrity_check', { simple: true })).toBe('ok');
    reopened.close();
  });
});
