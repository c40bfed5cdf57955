import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { openDatabase } from '../../src/store/database.js';
import { runModel, storedRun } from '../../src/runs/read/stored-run.js';
import { borderline, reviewQueue, runMonth } from '../support/core-calls.js';
import { demoDatabase, type DemoDatabase } from './demo-database.js';

/**
 * Each run's row and model are parsed once per connection and kept while the run is the same
 * run: the screens' reads (borderline pages, the review queue) reuse them, a replaced run is
 * read afresh, and a deleted one is refused.
 */
let demo: DemoDatabase;

beforeAll(async () => {
  demo = await demoDatabase('sample');
});
afterAll(() => demo?.close());

describe('the stored run, kept per connection', () => {
  it('parses a run\'s model once for all the reads of it, per connection', async () => {
    const { runId } = await runMonth(demo.db, { asOf: '2026-11-30', k: 3, covariance: 'full', restarts: 1, parentRunId: null });
    const model = runModel(demo.db, runId);
    borderline(demo.db, { runId, limit: 50 });
    reviewQueue(demo.db, { runId, limit: 50 });
    expect(runModel(demo.db, runId)).toBe(model);
    expect(storedRun(demo.db, runId)).toBe(storedRun(demo.db, runId));
    const other = openDatabase(demo.path);
    try {
      expect(runModel(other, runId)).not.toBe(model);
      expect(runModel(other, runId)).toEqual(model);
    } finally {
      other.close();
    }
  });

  it('reads a run afresh when its id was freed and taken by another run, and refuses a deleted one', async () => {
    const { runId } = await runMonth(demo.db, { asOf: '2026-11-30', k: 2, covariance: 'diag', restarts: 1, parentRunId: null });
    const before = runModel(demo.db, runId);
    expect(before.components).toBe(2);
    demo.db.prepare('DELETE FROM runs WHERE run_id = ?').run(runId);
    expect(() => storedRun(demo.db, runId)).toThrow(new RegExp(`There is no run ${runId}`));
    const replacement = await runMonth(demo.db, { asOf: '2026-11-30', k: 4, covariance: 'spherical', restarts: 1, parentRunId: null });
    expect(replacement.runId).toBe(runId);
    expect(runModel(demo.db, runId).components).toBe(4);
    expect(storedRun(demo.db, runId).covariance).toBe('spherical');
  });
});
