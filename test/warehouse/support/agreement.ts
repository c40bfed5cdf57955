/**
 * Agreement of a generated scoring query with the app's own scores on the same rows: synthetic
 * customers drawn from a run's own mixture (so every segment is populated), a features table in
 * an engine, the query's rows against appScores. Shared by the tests and the 1 M benchmark.
 */
import { closeSync, openSync, writeSync } from 'node:fs';
import { untransformValue } from '../../../src/features/transforms.js';
import { modelSql, type ScoringModel } from '../../../src/warehouse/index.js';
import { appScores, compareScores, type Agreement, type EngineScore, type FeatureRows, type Scores } from './app-scores.js';
import type { Engine } from './engines.js';

/** Small seeded generator (mulberry32, common practice for test data) with normal draws. */
export function seededRandom(seed: number): { uniform: () => number; normal: () => number } {
  let state = seed >>> 0;
  const uniform = () => {
    state = (state + 0x6d2b79f5) >>> 0;
    let t = state;
    t = Math.imul(t ^ (t >>> 15), t | 1);
    t ^= t + Math.imul(t ^ (t >>> 7), t | 61);
    return ((t ^ (t >>> 14)) >>> 0) / 4294967296;
  };
  const normal = () => Math.sqrt(-2 * Math.log(1 - uniform())) * Math.cos(2 * Math.PI * uniform());
  return { uniform, normal };
}

/** Lower Cholesky factor of a d × d symmetric positive-definite matrix at `offset` (row-major). */
function cholesky(matrix: Float64Array, offset: number, d: number): Float64Array {
  const lower = new Float64Array(d * d);
  for (let i = 0; i < d; i++) {
    for (let j = 0; j <= i; j++) {
      let sum = matrix[offset + i * d + j];
      for (let r = 0; r < j; r++) sum -= lower[i * d + r] * lower[j * d + r];
      lower[i * d + j] = i === j ? Math.sqrt(sum) : sum / lower[j * d + j];
    }
  }
  return lower;
}

/**
 * `n` customers drawn from the model's mixture, back in original units through the inverse
 * transforms, with a share of empty values (one feature, sometimes two) to exercise the patterns.
 */
export function syntheticRows(scoring: ScoringModel, n: number, seed: number, emptyShare = 0.01): FeatureRows {
  const { model, transforms } = scoring;
  const { components: k, dimensions: d } = model;
  const random = seededRandom(seed);
  const factors = Array.from({ length: k }, (_, c) => cholesky(model.covariances, c * d * d, d));
  const cumulative = Array.from(model.weights).map((_, c, weights) => weights.slice(0, c + 1).reduce((a, b) => a + b, 0));
  const columns = Array.from({ length: d }, () => new Float64Array(n));
  const customerIds = new Array<string>(n);
  const u = new Float64Array(d);
  for (let i = 0; i < n; i++) {
    customerIds[i] = `Z${String(i).padStart(8, '0')}`;
    const draw = random.uniform();
    let c = cumulative.findIndex((bound) => draw < bound);
    if (c < 0) c = k - 1;
    for (let j = 0; j < d; j++) u[j] = random.normal();
    for (let j = 0; j < d; j++) {
      let z = model.means[c * d + j];
      for (let r = 0; r <= j; r++) z += factors[c][j * d + r] * u[r];
      columns[j][i] = untransformValue(transforms[j], z);
    }
    if (d > 1 && random.uniform() < emptyShare) {
      columns[Math.floor(random.uniform() * d)][i] = NaN;
      if (d > 2 && random.uniform() < 0.2) columns[Math.floor(random.uniform() * d)][i] = NaN;
      // Never all empty: the app refuses such a row.
      if (columns.every((column) => Number.isNaN(column[i]))) columns[0][i] = untransformValue(transforms[0], model.means[c * d]);
    }
  }
  return { customerIds, columns };
}

/** Writes customer_id plus the features as CSV (shortest round-trip doubles; empty cell = NULL). */
export function writeFeatureCsv(path: string, features: readonly string[], rows: FeatureRows): void {
  const quote = (text: string) => (/[",\n\r]/.test(text) ? `"${text.replace(/"/g, '""')}"` : text);
  const file = openSync(path, 'w');
  try {
    writeSync(file, `${['customer_id', ...features].map(quote).join(',')}\n`);
    const chunk: string[] = [];
    for (let i = 0; i < rows.customerIds.length; i++) {
      let line = rows.customerIds[i];
      for (const column of rows.columns) line += Number.isNaN(column[i]) ? ',' : `,${column[i]}`;
      chunk.push(line);
      if (chunk.length === 50_000 || i === rows.customerIds.length - 1) {
        writeSync(file, `${chunk.join('\n')}\n`);
        chunk.length = 0;
      }
    }
  } finally {
    closeSync(file);
  }
}

/** The query's rows by customer id, numbers as numbers. */
export async function engineScores(engine: Engine, sql: string): Promise<Map<string, EngineScore>> {
  const toNumber = (value: unknown) => (value === null || value === undefined ? null : Number(value));
  const scores = new Map<string, EngineScore>();
  for (const row of await engine.query(sql)) {
    scores.set(String(row.customer_id), {
      segment: row.segment === null ? null : String(row.segment),
      confidence: toNumber(row.confidence),
      margin: toNumber(row.margin),
      borderline: toNumber(row.borderline),
      atypical: toNumber(row.atypical),
    });
  }
  return scores;
}

export interface TimedAgreement extends Agreement {
  engineSeconds: number;
  appSeconds: number;
}

/** Scores `table` (already loaded) in the engine and in the app, and compares them. */
export async function agreementOn(engine: Engine, scoring: ScoringModel, rows: FeatureRows, table: string, app?: Scores): Promise<TimedAgreement> {
  const { sql } = modelSql(scoring, { dialect: engine.name, featuresTable: table });
  const engineStarted = performance.now();
  const engineRows = await engineScores(engine, sql);
  const engineSeconds = (performance.now() - engineStarted) / 1000;
  const appStarted = performance.now();
  const reference = app ?? appScores(scoring, rows);
  const appSeconds = (performance.now() - appStarted) / 1000;
  return { ...compareScores(reference, engineRows), engineSeconds, appSeconds };
}
