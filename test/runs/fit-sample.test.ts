import { readFileSync } from 'node:fs';
import { join } from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import type { RunSummary, StartRunInput } from '../../src/api/contract.js';
import { isInputError } from '../../src/errors.js';
import { transformValue } from '../../src/features/transforms.js';
import { modelFromJSON, type DataMatrix, type MixtureModel } from '../../src/model/index.js';
import { decodeFloat64 } from '../../src/runs/blobs.js';
import { fitForRun, fitSampleRows } from '../../src/runs/fit.js';
import { getRunDetail } from '../../src/runs/read/run-detail.js';
import { storedRun } from '../../src/runs/read/stored-run.js';
import type { Database } from '../../src/store/database.js';
import { runMonth, runSettings } from '../support/core-calls.js';
import { cli } from '../support/run-cli.js';
import { demoDatabase, type DemoDatabase } from './demo-database.js';

/**
 * Fitting on a seeded sample of the placed customers (the fitSample setting), on the committed
 * 500-customer demo sample: the model is exactly the fit of the sampled rows, everyone is scored
 * with it, the same settings draw the same sample, and the settings file repeats it.
 */
let demo: DemoDatabase;
let db: Database;
let sampled: RunSummary;

const base: StartRunInput = { asOf: '2026-11-30', mode: 'refit', k: 3, covariance: 'diag', restarts: 2, seed: 11, parentRunId: null, fitSample: 150 };

function modelOf(runId: number): MixtureModel {
  return modelFromJSON(JSON.parse(db.prepare('SELECT model FROM runs WHERE run_id = ?').pluck().get(runId) as string));
}

function labels(runId: number): [string, number | null][] {
  return db.prepare('SELECT customer_id, segment_index FROM run_memberships WHERE run_id = ? ORDER BY customer_id').raw().all(runId) as [string, number | null][];
}

/** The placed customers' model features through the run's stored transforms, in customer id order (the run's row order). */
function placedMatrix(runId: number): { data: DataMatrix; logDensity: number[] } {
  const run = storedRun(db, runId);
  const rows = db
    .prepare('SELECT features, log_density FROM run_memberships WHERE run_id = ? AND too_new = 0 ORDER BY customer_id')
    .all(runId) as { features: Buffer; log_density: number }[];
  const d = run.features.length;
  const values = new Float64Array(rows.length * d);
  rows.forEach((row, i) => {
    const original = decodeFloat64(row.features);
    run.features.forEach((name, j) => (values[i * d + j] = transformValue(name, run.transforms[name], original[j])));
  });
  return { data: { values, rows: rows.length, cols: d, columnNames: run.features }, logDensity: rows.map((row) => row.log_density) };
}

beforeAll(async () => {
  demo = await demoDatabase('sample');
  db = demo.db;
  sampled = await runMonth(db, base);
});

afterAll(() => demo?.close());

describe('the fit sample rows', () => {
  it('are distinct, in ascending order, the same for the same seed and other for another', () => {
    const rows = fitSampleRows(10_000, 2_000, 5);
    expect(rows).toHaveLength(2_000);
    expect(new Set(rows).size).toBe(2_000);
    expect([...rows].every((row, i) => i === 0 || row > rows[i - 1])).toBe(true);
    expect(rows[0]).toBeGreaterThanOrEqual(0);
    expect(rows[rows.length - 1]).toBeLessThan(10_000);
    expect(fitSampleRows(10_000, 2_000, 5)).toEqual(rows);
    expect(fitSampleRows(10_000, 2_000, 6)).not.toEqual(rows);
  });
});

describe('a run fitted on a sample', () => {
  it('fits exactly the sampled rows, then scores every placed customer with that model', async () => {
    const { data, logDensity } = placedMatrix(sampled.runId);
    expect(data.rows).toBe(sampled.customers);
    expect(sampled.customers).toBeGreaterThan(150);
    // Every placed customer has a segment and a log density; the run's log-likelihood is over all of them.
    expect(labels(sampled.runId).filter(([, segment]) => segment !== null)).toHaveLength(sampled.customers);
    const total = logDensity.reduce((sum, value) => sum + value, 0);
    expect(storedRun(db, sampled.runId).logLikelihood).toBeCloseTo(total, 6);

    // The same engine fit on the drawn rows alone gives the stored model to the last bit.
    const rows = fitSampleRows(data.rows, 150, 11);
    const values = new Float64Array(rows.length * data.cols);
    rows.forEach((row, i) => values.set(data.values.subarray(row * data.cols, (row + 1) * data.cols), i * data.cols));
    const settings = { ...runSettings(db, base), fitSample: null };
    const direct = await fitForRun({ ...data, values, rows: rows.length }, settings, {});
    const stored = modelOf(sampled.runId);
    expect(Array.from(stored.means)).toEqual(Array.from(direct.model.means));
    expect(Array.from(stored.weights)).toEqual(Array.from(direct.model.weights));
    // …and it differs from the fit on everyone.
    const full = await fitForRun(data, settings, {});
    expect(Array.from(stored.means)).not.toEqual(Array.from(full.model.means));
  });

  it('says so in the run detail, the progress line and the command line', async () => {
    const detail = getRunDetail(db, sampled.runId);
    expect(detail.fittedOn).toBe(150);
    expect(detail.settings.fitSample).toBe(150);
    expect(detail.warnings).toEqual([]);
    const messages: string[] = [];
    const again = await runMonth(db, base, { onProgress: (progress) => messages.push(progress.message) });
    expect(messages).toContain(`Fitting mixtures on a seeded sample of 150 of ${sampled.customers} customers`);
    const shown = await cli('runs', '--db', demo.path, '--run', String(again.runId));
    expect(shown.code, shown.stderr).toBe(0);
    expect(shown.stdout).toContain(`fitted on a seeded sample of 150 of the ${sampled.customers} placed customers`);
    const whole = await runMonth(db, { ...base, fitSample: null });
    expect(getRunDetail(db, whole.runId).fittedOn).toBe(whole.customers);
    expect((await cli('runs', '--db', demo.path, '--run', String(whole.runId))).stdout).not.toContain('fitted on a seeded sample');
    const rescore = await runMonth(db, { ...base, mode: 'rescore', parentRunId: sampled.runId });
    expect(getRunDetail(db, rescore.runId).fittedOn).toBeNull();
  });

  it('draws the same sample from the same seed (same labels) and another from another seed', async () => {
    const again = await runMonth(db, base);
    expect(labels(again.runId)).toEqual(labels(sampled.runId));
    expect(again.bic).toBe(sampled.bic);
    const otherSeed = await runMonth(db, { ...base, seed: 12 });
    expect(Array.from(modelOf(otherSeed.runId).means)).not.toEqual(Array.from(modelOf(sampled.runId).means));
  });

  it('sweeps on the sample too: every fit of the k range on the sampled rows', async () => {
    const swept = await runMonth(db, { ...base, k: 'auto', kMin: 2, kMax: 3, covariance: 'auto', fitSample: 120 });
    const sweep = JSON.parse(db.prepare('SELECT sweep FROM runs WHERE run_id = ?').pluck().get(swept.runId) as string) as { k: number; covariance: string; bic: number; logLikelihood: number; parameterCount: number }[];
    expect(sweep).toHaveLength(8);
    // Each row's BIC counts the 120 sampled rows: BIC = −2 log L + p ln 120.
    for (const row of sweep) expect(row.bic).toBeCloseTo(-2 * row.logLikelihood + row.parameterCount * Math.log(120), 6);
    expect(getRunDetail(db, swept.runId).fittedOn).toBe(120);
  });

  it('fits on everyone, with a warning, when the sample is larger than the placed customers', async () => {
    const whole = await runMonth(db, { ...base, fitSample: null });
    const larger = await runMonth(db, { ...base, fitSample: 1_000_000 });
    expect(labels(larger.runId)).toEqual(labels(whole.runId));
    const detail = getRunDetail(db, larger.runId);
    expect(detail.fittedOn).toBe(larger.customers);
    expect(detail.warnings).toEqual([
      `The fit sample (1,000,000) is larger than the ${larger.customers} placed customers, so the model was fitted on all of them.`,
    ]);
  });

  it('refuses a sample too small for the k range, naming the fit sample, and stores nothing', async () => {
    const before = db.prepare('SELECT count(*) FROM runs').pluck().get();
    const refusal = await runMonth(db, { ...base, k: 'auto', kMin: 2, kMax: 8, fitSample: 5 }).catch((error: unknown) => error);
    expect(isInputError(refusal)).toBe(true);
    expect((refusal as Error).message).toBe(
      'k = 8 is too large for a fit sample of 5 customers; the sample allows at most k = 4. ' +
        'Raise the fit sample (--fit-sample, or none to fit on all placed customers) or lower k (or --k-max).',
    );
    expect(db.prepare('SELECT count(*) FROM runs').pluck().get()).toBe(before);
  });

  it('is written by runs --settings-out and repeated exactly by refresh --settings', async () => {
    const file = join(demo.folder, 'sampled.json');
    const written = await cli('runs', '--db', demo.path, '--run', String(sampled.runId), '--settings-out', file);
    expect(written.code, written.stderr).toBe(0);
    expect(JSON.parse(readFileSync(file, 'utf8'))).toMatchObject({ fitSample: 150, seed: 11 });
    const repeated = await cli('refresh', '--db', demo.path, '--settings', file, '--json');
    expect(repeated.code, repeated.stderr).toBe(0);
    const summary = JSON.parse(repeated.stdout) as RunSummary;
    expect(summary.bic).toBe(sampled.bic);
    expect(labels(summary.runId)).toEqual(labels(sampled.runId));
    // The flag overrides the file; none fits on everyone.
    const overridden = await cli('refresh', '--db', demo.path, '--settings', file, '--fit-sample', 'none', '--json');
    expect(overridden.code, overridden.stderr).toBe(0);
    expect(getRunDetail(db, JSON.parse(overridden.stdout).runId).settings.fitSample).toBeNull();
  });
});
