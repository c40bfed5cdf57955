/**
 * Benchmark (DESIGN.md §11): scoring customers in DuckDB with the generated SQL (model-sql) against
 * the app's own scoring of the same rows (the run's transforms, the engine's scoreRows, segments
 * and flags), in the same process. The model is a run fitted on the demo chain's committed sample
 * (default settings); the customers are drawn from its mixture, 1% with an empty feature.
 * DuckDB reads an in-memory table and writes the labels into another (CREATE TABLE … AS); the app
 * scores Float64Arrays in memory. Both sides are checked to agree (segment counts over all rows,
 * every field on 1 row in 100). Not part of npm test.
 *   npx tsx test/bench/warehouse-scoring.ts [--customers 10000000] [--repeat 3] [--covariance auto|full|diag|spherical|tied]
 * (covariance auto, the default here, tries all four structures on the sample and keeps the best.)
 */
import { DuckDBInstance } from '@duckdb/node-api';
import { covarianceTypes, type CovarianceType } from '../../src/api/contract.js';
import { runMonth } from '../support/core-calls.js';
import { modelSql, readScoringModel } from '../../src/warehouse/index.js';
import { demoDatabase } from '../runs/demo-database.js';
import { syntheticRows } from '../warehouse/support/agreement.js';
import { appScores, compareScores, type EngineScore, type FeatureRows } from '../warehouse/support/app-scores.js';
import { benchFlag } from './synthetic-receipts.js';

const customers = benchFlag('customers', 10_000_000);
const repeat = benchFlag('repeat', 3);
const CHUNK = 1_000_000;

const seconds = (since: number) => (performance.now() - since) / 1000;

function covarianceFlag(): CovarianceType | 'auto' {
  const at = process.argv.indexOf('--covariance');
  if (at < 0) return 'auto';
  const value = process.argv[at + 1];
  if (value !== 'auto' && !(covarianceTypes as readonly string[]).includes(value)) throw new Error(`--covariance takes auto, ${covarianceTypes.join(', ')}; got "${value}".`);
  return value as CovarianceType | 'auto';
}

const demo = await demoDatabase('sample');
const covariance = covarianceFlag();
const run = await runMonth(demo.db, { asOf: '2026-11-30', windowMonths: 12, mode: 'refit', k: 'auto', covariance, parentRunId: null });
const scoring = readScoringModel(demo.db, run.runId);
demo.close();
const d = scoring.features.length;
console.log(`model: run on the demo sample, ${scoring.model.covarianceType} covariance, k = ${scoring.model.components}, features ${scoring.features.join(', ')}`);

const instance = await DuckDBInstance.create(':memory:');
const connection = await instance.connect();
await connection.run(`CREATE TABLE customer_features (customer_id BIGINT, ${scoring.features.map((name) => `"${name}" DOUBLE`).join(', ')})`);
const columns = Array.from({ length: d }, () => new Float64Array(customers));
let started = performance.now();
const appender = await connection.createAppender('customer_features');
for (let offset = 0; offset < customers; offset += CHUNK) {
  const size = Math.min(CHUNK, customers - offset);
  const chunk = syntheticRows(scoring, size, 7 + offset / CHUNK, 0.01);
  for (let i = 0; i < size; i++) {
    appender.appendBigInt(BigInt(offset + i));
    for (let j = 0; j < d; j++) {
      const value = chunk.columns[j][i];
      columns[j][offset + i] = value;
      if (Number.isNaN(value)) appender.appendNull();
      else appender.appendDouble(value);
    }
    appender.endRow();
  }
}
appender.closeSync();
console.log(`${customers.toLocaleString('en-GB')} customers generated and loaded into DuckDB in ${seconds(started).toFixed(1)} s (not timed below)`);

const { sql } = modelSql(scoring, { dialect: 'duckdb', featuresTable: 'customer_features' });
const rows: FeatureRows = { customerIds: new Array<string>(customers), columns };

async function duckdbScoring(threads: number): Promise<number> {
  await connection.run(`SET threads = ${threads}`);
  await connection.run('DROP TABLE IF EXISTS scores');
  const since = performance.now();
  await connection.run(`CREATE TABLE scores AS ${sql}`);
  return seconds(since);
}

const results: { round: number; duckdb2: number; duckdb1: number; app: number }[] = [];
let app = appScores(scoring, { customerIds: rows.customerIds.slice(0, 10), columns: columns.map((column) => column.subarray(0, 10)) });
for (let round = 1; round <= repeat; round++) {
  const duckdb2 = await duckdbScoring(2);
  const duckdb1 = await duckdbScoring(1);
  started = performance.now();
  app = appScores(scoring, rows);
  const appSeconds = seconds(started);
  results.push({ round, duckdb2, duckdb1, app: appSeconds });
  console.log(
    `round ${round}: DuckDB ${duckdb2.toFixed(2)} s (2 threads), ${duckdb1.toFixed(2)} s (1 thread); app ${appSeconds.toFixed(2)} s (1 thread); ` +
      `ratio DuckDB/app ${(duckdb2 / appSeconds).toFixed(2)} (2 threads), ${(duckdb1 / appSeconds).toFixed(2)} (1 thread)`,
  );
}

// The two sides agree: segment counts over every row, every field on 1 row in 100.
const counts = new Map<string, number>();
for (const segment of app.segment) counts.set(segment!, (counts.get(segment!) ?? 0) + 1);
const reader = await connection.runAndReadAll('SELECT segment, count(*) AS n FROM scores GROUP BY segment');
const engineCounts = new Map(reader.getRowObjectsJS().map((row) => [String(row.segment), Number(row.n)]));
const countsAgree = [...counts].every(([segment, n]) => engineCounts.get(segment) === n) && engineCounts.size === counts.size;
const sample = await connection.runAndReadAll('SELECT * FROM scores WHERE customer_id % 100 = 0');
const sampled = new Map<string, EngineScore>();
for (const row of sample.getRowObjectsJS()) {
  sampled.set(String(row.customer_id), {
    segment: row.segment === null ? null : String(row.segment),
    confidence: row.confidence === null ? null : Number(row.confidence),
    margin: row.margin === null ? null : Number(row.margin),
    borderline: row.borderline === null ? null : Number(row.borderline),
    atypical: row.atypical === null ? null : Number(row.atypical),
  });
}
const every100 = Array.from({ length: Math.ceil(customers / 100) }, (_, i) => i * 100);
const agreement = compareScores(
  {
    customerIds: every100.map(String),
    segment: every100.map((i) => app.segment[i]),
    confidence: Float64Array.from(every100, (i) => app.confidence[i]),
    margin: Float64Array.from(every100, (i) => app.margin[i]),
    borderline: Int8Array.from(every100, (i) => app.borderline[i]),
    atypical: Int8Array.from(every100, (i) => app.atypical[i]),
  },
  sampled,
);
console.log(
  `agreement: segment counts ${countsAgree ? 'equal' : 'DIFFER'}; on ${agreement.customers} sampled rows ${agreement.segmentMismatches} segment and ${agreement.flagMismatches} flag mismatches, ` +
    `confidence within ${agreement.maxConfidenceDifference.toExponential(1)} relative, margin within ${agreement.maxMarginAbsoluteDifference.toExponential(1)}`,
);
// Same-round ratios are the fairer figure on a shared machine; their median is the result.
const median = (values: number[]) => {
  const sorted = [...values].sort((a, b) => a - b);
  const middle = sorted.length >> 1;
  return sorted.length % 2 ? sorted[middle] : (sorted[middle - 1] + sorted[middle]) / 2;
};
const range = (key: 'duckdb2' | 'duckdb1' | 'app') => `${Math.min(...results.map((r) => r[key])).toFixed(1)}–${Math.max(...results.map((r) => r[key])).toFixed(1)} s`;
console.log(
  `${customers.toLocaleString('en-GB')} customers, ${repeat} rounds: median round ratio DuckDB/app ${median(results.map((r) => r.duckdb2 / r.app)).toFixed(2)} (2 threads), ` +
    `${median(results.map((r) => r.duckdb1 / r.app)).toFixed(2)} (1 thread); DuckDB ${range('duckdb2')} (2 threads), ${range('duckdb1')} (1 thread), app ${range('app')}`,
);
connection.closeSync();
instance.closeSync();
