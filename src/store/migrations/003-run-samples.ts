import type { Migration } from '../migration-types.js';
import { storeDisplaySample } from '../../runs/display-sample.js';

/**
 * The display sample of every run (src/runs/display-sample.ts): up to 20,000 placed customers
 * in a seeded random order, so charts read a fixed-size sample instead of scanning all
 * memberships. Runs stored before this version get theirs drawn here, from their own seed.
 */
export const runSamples: Migration = {
  version: 3,
  name: 'run display samples',
  up(db) {
    db.exec(`
      CREATE TABLE run_samples (
        run_id INTEGER NOT NULL REFERENCES runs(run_id) ON DELETE CASCADE,
        position INTEGER NOT NULL,
        customer_id TEXT NOT NULL,
        PRIMARY KEY (run_id, position)
      ) WITHOUT ROWID;
    `);
    const runs = db.prepare('SELECT run_id, settings FROM runs ORDER BY run_id').all() as { run_id: number; settings: string }[];
    const placed = db.prepare('SELECT customer_id FROM run_memberships WHERE run_id = ? AND segment_index IS NOT NULL ORDER BY customer_id').pluck();
    for (const run of runs) {
      const seed = Number((JSON.parse(run.settings) as { seed?: unknown }).seed ?? 0);
      storeDisplaySample(db, run.run_id, placed.all(run.run_id) as string[], Number.isInteger(seed) && seed >= 0 ? seed : 0);
    }
  },
};
