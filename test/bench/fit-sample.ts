/**
 * Benchmark: how close a run fitted on a seeded sample of the placed customers (fitSample) comes
 * to the run fitted on all of them, at 1,000,000 customers, and what it saves.
 *
 * The customers are drawn from a known mixture: the default run on the demo chain's committed
 * sample, its components drawn in its transformed space and mapped back to original units (the
 * warehouse agreement's generator, no empty values), then imported with `import --features`. Each
 * run is a whole `refresh` through the runs core with the run defaults (unless flags fix them),
 * the model features log1p + z-score as for receipts. The full fit runs first; then each sample.
 * For each model it prints: the fit phase's time (the ratio against the full fit first, absolute
 * beside), the whole run's time, the chosen k and structure, the log-likelihood of ALL placed
 * customers under the model (total and per customer; every run z-scores with the same means and
 * deviations, taken from all placed customers, so the numbers compare), and the adjusted Rand
 * index of its labels against the full fit's.
 *   npx tsx test/bench/fit-sample.ts [--customers 1000000] [--samples 500000,200000,50000]
 *       [--k N] [--k-max N] [--covariance full|diag|spherical|tied] [--restarts N] [--seed N]
 */
import { mkdtempSync, rmSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { startRunInput, type StartRunInput } from '../../src/api/contract.js';
import { runSettingsFor } from '../../src/api/long-tasks.js';
import { importFile } from '../../src/ingest/import-file.js';
import { adjustedRandIndex } from '../../src/model/index.js';
import { runSegmentation } from '../../src/runs/run.js';
import type { RunProgress } from '../../src/runs/types.js';
import { openDatabase, type Database } from '../../src/store/database.js';
import { readScoringModel } from '../../src/warehouse/index.js';
import { demoDatabase } from '../runs/demo-database.js';
import { runMonth } from '../support/core-calls.js';
import { syntheticRows, writeFeatureCsv } from '../warehouse/support/agreement.js';
import { benchFlag } from './synthetic-receipts.js';

const customers = benchFlag('customers', 1_000_000);
const samplesAt = process.argv.indexOf('--samples');
const samples = (samplesAt >= 0 ? process.argv[samplesAt + 1] : '500000,200000,50000').split(',').map(Number);
const textFlag = (name: string) => (process.argv.includes(`--${name}`) ? process.argv[process.argv.indexOf(`--${name}`) + 1] : undefined);
/** Settings the command line fixes; everything else keeps the run defaults. */
const fixed: Partial<StartRunInput> = {};
if (textFlag('k')) fixed.k = textFlag('k') === 'auto' ? 'auto' : Number(textFlag('k'));
if (textFlag('k-max')) fixed.kMax = Number(textFlag('k-max'));
if (textFlag('covariance')) fixed.covariance = textFlag('covariance') as StartRunInput['covariance'];
if (textFlag('restarts')) fixed.restarts = Number(textFlag('restarts'));
if (textFlag('seed')) fixed.seed = Number(textFlag('seed'));

const seconds = (since: number) => (performance.now() - since) / 1000;
const folder = mkdtempSync(join(tmpdir(), 'spendmix-fit-sample-'));

interface Measured {
  fitSample: number | null;
  fitSeconds: number;
  runSeconds: number;
  k: number;
  covariance: string;
  customers: number;
  logLikelihood: number;
  labels: Int32Array;
}

/** The demo default run's mixture, drawn at `customers` and imported as a feature table. */
async function syntheticFeatureDatabase(): Promise<{ db: Database; features: string[] }> {
  const demo = await demoDatabase('sample');
  const run = await runMonth(demo.db, { asOf: '2026-11-30', windowMonths: 12, mode: 'refit', parentRunId: null });
  const scoring = readScoringModel(demo.db, run.runId);
  demo.close();
  console.log(`generating mixture: the demo default run, k = ${scoring.model.components} ${scoring.model.covarianceType}, features ${scoring.features.join(', ')}`);
  const started = performance.now();
  const csv = join(folder, 'customer_features.csv');
  writeFeatureCsv(csv, scoring.features, syntheticRows(scoring, customers, 2026, 0));
  const db = openDatabase(join(folder, 'chain.db'));
  const imported = await importFile(db, { path: csv, kind: 'features', options: { reportDir: folder } });
  rmSync(csv, { force: true });
  console.log(`${imported.rowsImported.toLocaleString('en-GB')} customers drawn and imported in ${seconds(started).toFixed(1)} s`);
  return { db, features: scoring.features };
}

async function measure(db: Database, features: string[], fitSample: number | null): Promise<Measured> {
  const input: StartRunInput = {
    asOf: '2026-11-30',
    mode: 'refit',
    parentRunId: null,
    source: 'imported',
    features: features.map((feature) => ({ feature, log1p: true, zScore: true })),
    ...fixed,
    fitSample,
  };
  let fitStarted = 0;
  let fitSeconds = 0;
  let phase: RunProgress['phase'] | null = null;
  const started = performance.now();
  const summary = await runSegmentation(db, runSettingsFor(db, startRunInput.parse(input)), {
    onProgress: (progress) => {
      if (progress.phase === phase) return;
      if (phase === 'fit') fitSeconds = seconds(fitStarted);
      if (progress.phase === 'fit') fitStarted = performance.now();
      phase = progress.phase;
    },
  });
  const runSeconds = seconds(started);
  const stored = db.prepare('SELECT log_likelihood FROM runs WHERE run_id = ?').pluck().get(summary.runId) as number;
  const labels = Int32Array.from(
    db.prepare('SELECT segment_index FROM run_memberships WHERE run_id = ? AND too_new = 0 ORDER BY customer_id').pluck().all(summary.runId) as number[],
  );
  // Each run's rows are deleted once measured, so the database stays the size of one run.
  db.prepare('DELETE FROM runs WHERE run_id = ?').run(summary.runId);
  const measured = { fitSample, fitSeconds, runSeconds, k: summary.k, covariance: summary.covariance, customers: summary.customers, logLikelihood: stored, labels };
  console.log(
    `  fit sample ${fitSample === null ? 'none (all)' : fitSample.toLocaleString('en-GB')}: fit ${fitSeconds.toFixed(1)} s, run ${runSeconds.toFixed(1)} s, ` +
      `k = ${summary.k} ${summary.covariance}, log L of all ${summary.customers.toLocaleString('en-GB')} = ${stored.toFixed(1)}`,
  );
  return measured;
}

/** One row of the comparison table: the ratio against the full fit first, absolute times beside. */
function tableRow(row: Measured, full: Measured): string {
  const perCustomer = row.logLikelihood / row.customers;
  return [
    row.fitSample === null ? 'all' : row.fitSample.toLocaleString('en-GB'),
    `${(row.fitSeconds / full.fitSeconds).toFixed(3)} (${row.fitSeconds.toFixed(1)})`,
    `${(row.runSeconds / full.runSeconds).toFixed(3)} (${row.runSeconds.toFixed(1)})`,
    `${row.k} ${row.covariance}`,
    row.logLikelihood.toFixed(1),
    perCustomer.toFixed(5),
    (perCustomer - full.logLikelihood / full.customers).toExponential(2),
    adjustedRandIndex(full.labels, row.labels).toFixed(4),
  ].join(' | ');
}
const tableHeader =
  'fit sample | fit time × full (s) | run time × full (s) | k, structure | log L of all customers | per customer | per customer − full | ARI against full';

try {
  const { db, features } = await syntheticFeatureDatabase();
  console.log(`settings fixed by flags: ${Object.keys(fixed).length ? JSON.stringify(fixed) : 'none (run defaults)'}`);
  const full = await measure(db, features, null);
  const rows = [full];
  // Each sample's row is printed as soon as it is measured, so a long run shows what it has.
  for (const size of samples) {
    rows.push(await measure(db, features, size));
    console.log(`    ${tableRow(rows[rows.length - 1], full)}`);
  }
  db.close();
  console.log(`\n${tableHeader}`);
  for (const row of rows) console.log(tableRow(row, full));
} finally {
  rmSync(folder, { recursive: true, force: true });
}
