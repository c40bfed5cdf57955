/**
 * Benchmark: a full run on synthetic customers — features, sweep k = 2…8 × 4 structures,
 * memberships, profiles, storing — timed per phase, beside a plain one-pass
 * `SELECT customer_id, SUM(amount_cents) FROM receipts GROUP BY customer_id` over the same table in
 * the same command (each phase is also given as a multiple of it). The run is deleted afterwards so
 * the cached database stays as built.
 *   npx tsx test/bench/full-run.ts [--customers 1000000] [--rows 20000000] [--k-max 8] [--restarts 1] [--max-iter 100]
 */
import { startRunInput } from '../../src/api/contract.js';
import { runSettingsFor } from '../../src/api/long-tasks.js';
import { runSegmentation } from '../../src/runs/run.js';
import type { RunProgress } from '../../src/runs/types.js';
import { openDatabase } from '../../src/store/database.js';
import { benchFlag as flag, SYNTHETIC_AS_OF, syntheticReceiptsDatabase } from './synthetic-receipts.js';

const customers = flag('customers', 1_000_000);
const rows = flag('rows', 20_000_000);
const kMax = flag('k-max', 8);
const restarts = flag('restarts', 1);
const maxIterations = flag('max-iter', 100);
const built = syntheticReceiptsDatabase(customers, rows);
console.log(`database ${built.path} (${built.reused ? 'reused' : `built in ${built.seconds.toFixed(1)} s`})`);
const db = openDatabase(built.path);

let started = performance.now();
let groups = 0;
for (const _ of db.prepare('SELECT customer_id, SUM(amount_cents) FROM receipts GROUP BY customer_id').raw().iterate()) groups++;
const reference = (performance.now() - started) / 1000;
console.log(`reference: plain GROUP BY ${reference.toFixed(2)} s (${groups} groups)`);

const phaseSeconds = new Map<RunProgress['phase'], number>();
let currentPhase: RunProgress['phase'] | null = null;
let phaseStart = performance.now();
const fitsSeen = new Set<string>();
started = performance.now();
const summary = await runSegmentation(
  db,
  runSettingsFor(
    db,
    startRunInput.parse({ asOf: SYNTHETIC_AS_OF, windowMonths: 12, mode: 'refit', parentRunId: null, k: 'auto', kMin: 2, kMax, covariance: 'auto', restarts, maxIterations }),
  ),
  {
    onProgress: (progress) => {
      if (progress.fit) fitsSeen.add(`${progress.fit.k}/${progress.fit.covarianceType}/${progress.fit.restart}`);
      if (progress.phase === currentPhase) return;
      const now = performance.now();
      if (currentPhase) phaseSeconds.set(currentPhase, (phaseSeconds.get(currentPhase) ?? 0) + (now - phaseStart) / 1000);
      currentPhase = progress.phase;
      phaseStart = now;
      console.log(`  … ${progress.phase}: ${progress.message}`);
    },
  },
);
const total = (performance.now() - started) / 1000;
if (currentPhase) phaseSeconds.set(currentPhase, (phaseSeconds.get(currentPhase) ?? 0) + (performance.now() - phaseStart) / 1000);

console.log(`run ${summary.runId}: ${summary.customers} placed, ${summary.tooNew} too new, k = ${summary.k} ${summary.covariance}, ${fitsSeen.size} (k, structure, restart) fits reported progress`);
console.log('phase        seconds   × plain GROUP BY');
for (const [phase, seconds] of phaseSeconds) console.log(`${phase.padEnd(11)} ${seconds.toFixed(2).padStart(8)}   ${(seconds / reference).toFixed(2).padStart(6)}`);
console.log(`${'total'.padEnd(11)} ${total.toFixed(2).padStart(8)}   ${(total / reference).toFixed(2).padStart(6)}`);
const slowest = [...phaseSeconds.entries()].sort((a, b) => b[1] - a[1])[0];
console.log(`slowest phase: ${slowest[0]} (${((100 * slowest[1]) / total).toFixed(0)}% of the run)`);

db.prepare('DELETE FROM runs WHERE run_id = ?').run(summary.runId);
db.close();
