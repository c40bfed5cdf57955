import type { Migration } from '../migration-types.js';

/** As DISPLAY_SAMPLE_SIZE in src/runs/display-sample.ts (the store does not import the runs layer). */
const SAMPLE_SIZE = 20_000;

/**
 * The display sample of every run (src/runs/display-sample.ts draws it when a run is stored):
 * up to 20,000 placed customers in a random order with their model segment and stored features,
 * so charts read one small table instead of scanning or probing all memberships. Runs stored
 * before this version get an evenly spaced pick over their customer ids, in a scrambled order
 * (Knuth's multiplicative hash of the index) so that any prefix still spreads over the ids.
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
        segment_index INTEGER NOT NULL,
        features BLOB NOT NULL,
        PRIMARY KEY (run_id, position)
      ) WITHOUT ROWID;
    `);
    const runIds = db.prepare('SELECT run_id FROM runs ORDER BY run_id').pluck().all() as number[];
    const placed = db.prepare('SELECT customer_id FROM run_memberships WHERE run_id = ? AND segment_index IS NOT NULL ORDER BY customer_id').pluck();
    const copy = db.prepare(`
      INSERT INTO run_samples (run_id, position, customer_id, segment_index, features)
      SELECT run_id, @position, customer_id, segment_index, features FROM run_memberships WHERE run_id = @runId AND customer_id = @customerId`);
    const scramble = (i: number) => Math.imul(i, 2654435761) >>> 0;
    for (const runId of runIds) {
      const ids = placed.all(runId) as string[];
      const step = Math.max(1, Math.floor(ids.length / SAMPLE_SIZE));
      const picks: string[] = [];
      for (let i = 0; i < ids.length && picks.length < SAMPLE_SIZE; i += step) picks.push(ids[i]);
      const order = picks.map((_, i) => i).sort((a, b) => scramble(a) - scramble(b));
      order.forEach((pick, position) => copy.run({ runId, position, customerId: picks[pick] }));
    }
  },
};
