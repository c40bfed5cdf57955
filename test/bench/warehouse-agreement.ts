/**
 * Agreement of the generated scoring query with the app's own scores at 1,000,000 synthetic
 * customers, in DuckDB, SQLite and PostgreSQL (a throw-away cluster; skipped when PostgreSQL is
 * not installed). npm test runs the same check at 100,000 customers (test/warehouse/model-sql.test.ts);
 * at 1 M the three engines took about 4 minutes on a shared 2-core machine, too long for every run.
 * The model is a run fitted on the demo chain's committed sample (default settings); customers are
 * drawn from its mixture, 1% with an empty feature. Prints, per engine: customers, segment and flag
 * mismatches, largest relative confidence difference, largest margin difference, and times.
 *   npx tsx test/bench/warehouse-agreement.ts [--customers 1000000]
 */
import { mkdtempSync, rmSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { runMonth } from '../support/core-calls.js';
import { readScoringModel } from '../../src/warehouse/index.js';
import { demoDatabase } from '../runs/demo-database.js';
import { agreementOn, syntheticRows, writeFeatureCsv } from '../warehouse/support/agreement.js';
import { appScores } from '../warehouse/support/app-scores.js';
import { openDuckDb, openPostgres, openSqlite, postgresBinaries } from '../warehouse/support/engines.js';
import { benchFlag } from './synthetic-receipts.js';

const customers = benchFlag('customers', 1_000_000);
const folder = mkdtempSync(join(tmpdir(), 'spendmix-warehouse-agreement-'));
try {
  const demo = await demoDatabase('sample');
  const run = await runMonth(demo.db, { asOf: '2026-11-30', windowMonths: 12, mode: 'refit', k: 'auto', covariance: 'auto', parentRunId: null });
  const scoring = readScoringModel(demo.db, run.runId);
  demo.close();
  console.log(`model: ${scoring.model.covarianceType} covariance, k = ${scoring.model.components}, features ${scoring.features.join(', ')}`);
  const rows = syntheticRows(scoring, customers, 2026, 0.01);
  const csv = join(folder, 'customer_features.csv');
  writeFeatureCsv(csv, scoring.features, rows);
  let started = performance.now();
  const app = appScores(scoring, rows);
  console.log(`app scoring of ${customers.toLocaleString('en-GB')} customers: ${((performance.now() - started) / 1000).toFixed(1)} s`);
  const openers = [openDuckDb, openSqlite, ...(postgresBinaries() ? [openPostgres] : [])];
  if (!postgresBinaries()) console.log('PostgreSQL is not installed: skipped (Debian package postgresql).');
  for (const open of openers) {
    started = performance.now();
    const engine = await open();
    await engine.loadCsv('customer_features', [{ name: 'customer_id', type: 'text' }, ...scoring.features.map((name) => ({ name, type: 'double' as const }))], csv);
    const loadSeconds = (performance.now() - started) / 1000;
    const result = await agreementOn(engine, scoring, rows, 'customer_features', app);
    console.log(
      `${engine.name}: ${result.customers.toLocaleString('en-GB')} customers, ${result.missing} missing, ${result.segmentMismatches} segment mismatches, ` +
        `${result.flagMismatches} flag mismatches, confidence within ${result.maxConfidenceDifference.toExponential(1)} relative, ` +
        `margin within ${result.maxMarginAbsoluteDifference.toExponential(1)} (${result.maxMarginDifference.toExponential(1)} relative); ` +
        `load ${loadSeconds.toFixed(1)} s, query with reading the rows ${result.engineSeconds.toFixed(1)} s`,
    );
    await engine.close();
  }
} finally {
  rmSync(folder, { recursive: true, force: true });
}
