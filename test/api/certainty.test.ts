import { uniformFloat64 } from 'pure-rand/distribution/uniformFloat64';
import { xoroshiro128plus } from 'pure-rand/generator/xoroshiro128plus';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import type { ApiOutput, StartRunInput } from '../../src/api/contract.js';
import { callApi } from '../../src/api/handlers.js';
import { ApiSession } from '../../src/api/session.js';
import { isInputError } from '../../src/errors.js';
import { computeFlags } from '../../src/runs/flags.js';
import {
  atypicalCount,
  borderlineCount,
  buildCertaintySummary,
  certaintySummary as certaintyView,
  confidenceHistogram,
  hasCachedCertaintySummary,
  runCertaintySummary,
} from '../../src/runs/read/certainty.js';
import { listSegments } from '../../src/runs/read/segments.js';
import { openDatabase } from '../../src/store/database.js';
import { borderline, decide, rename, reviewQueue, runMonth } from '../support/core-calls.js';
import { demoDatabase, type DemoDatabase } from '../runs/demo-database.js';
import { certaintyByRule, readColumnsByRule, withoutQueue, type CertaintyColumnsByRule } from './certainty-reference.js';

/**
 * The Certainty counts come from a cached per-run summary; they must be exactly what the runs
 * core's flag rule (src/runs/flags.ts) gives over all placed memberships, for every threshold
 * the sliders can set and for any other the API accepts. The run: the committed demo sample
 * (500 invented customers) loaded through the importer and segmented by the runs core.
 */

const generator = xoroshiro128plus(20261202);
const uniform = () => uniformFloat64(generator);
const pick = <T>(values: ArrayLike<T>): T => values[Math.floor(uniform() * values.length)];

/** The neighbouring doubles of x, below and above (ties and near-ties with the grid's edges). */
function neighbours(x: number): [number, number] {
  const view = new Float64Array(1);
  const bits = new BigInt64Array(view.buffer);
  view[0] = x;
  if (x === 0) return [-Number.MIN_VALUE, Number.MIN_VALUE];
  const step = x > 0 ? 1n : -1n;
  bits[0] -= step;
  const below = view[0];
  bits[0] += 2n * step;
  return [below, view[0]];
}

/** A threshold of one of the kinds that can reach the API: slider steps, customers' own values, their neighbours, anything. */
function anyThreshold(own: Float64Array): number {
  const kind = Math.floor(uniform() * 5);
  if (kind === 0) return Number((Math.floor(uniform() * 101) / 100).toFixed(2));
  if (kind === 1) return pick(own);
  if (kind === 2) return Math.min(1, Math.max(0, pick(neighbours(pick(own)))));
  if (kind === 3) return Math.min(1, Math.max(0, pick(neighbours(Math.floor(uniform() * 101) / 100))));
  return uniform();
}

let demo: DemoDatabase;
let runId: number;
let columns: CertaintyColumnsByRule;
const base: StartRunInput = { asOf: '2026-11-30', windowMonths: 12, mode: 'refit', k: 4, covariance: 'full', restarts: 1, parentRunId: null, seed: 7 };
// Four segments (each component its own): enough borderline customers for the sliders' grid to move the counts.
const fourSegments: Partial<StartRunInput> = { segmentCount: 4 };

beforeAll(async () => {
  demo = await demoDatabase('sample', { via: 'importer' });
  runId = (await runMonth(demo.db, { ...base, ...fourSegments })).runId;
  columns = readColumnsByRule(demo.db, runId);
});
afterAll(() => demo?.close());

describe('Certainty counts from the cached summary', () => {
  it('equal the flag rule at every slider position (confidence 0.30–0.99, margin 0–0.80 by 0.01; percentile 0–10 by 0.1)', () => {
    expect(columns.confidence.length).toBeGreaterThan(400);
    const summary = runCertaintySummary(demo.db, runId);
    const borderlineSeen = new Set<number>();
    for (let c = 30; c <= 99; c++) {
      for (let m = 0; m <= 80; m++) {
        // The slider's value arrives as the decimal it shows.
        const thresholds = { borderlineConfidence: Number((c / 100).toFixed(2)), borderlineMargin: Number((m / 100).toFixed(2)), atypicalPercentile: 1 };
        const expected = computeFlags(columns.confidence, columns.margin, columns.logDensity, thresholds).borderline.reduce((sum, flag) => sum + flag, 0);
        expect(borderlineCount(summary, thresholds)).toBe(expected);
        borderlineSeen.add(expected);
      }
    }
    // The grid is exercised: the counts really move with the sliders.
    expect(borderlineSeen.size).toBeGreaterThan(50);
    for (let p = 0; p <= 100; p++) {
      const atypicalPercentile = Number((p / 10).toFixed(1));
      const flags = computeFlags(columns.confidence, columns.margin, columns.logDensity, { borderlineConfidence: 0.7, borderlineMargin: 0.2, atypicalPercentile });
      expect(atypicalCount(summary, atypicalPercentile)).toEqual({ atypical: flags.atypical.reduce((sum, flag) => sum + flag, 0), cut: flags.atypicalLogDensityBelow });
    }
  });

  it('equal the flag rule for 3,000 random thresholds off the grid, on customers\' own values and a double away from them', () => {
    let offGrid = 0;
    for (let trial = 0; trial < 3000; trial++) {
      const input = {
        runId,
        borderlineConfidence: anyThreshold(columns.confidence),
        borderlineMargin: anyThreshold(columns.margin),
        atypicalPercentile: pick([0, 50, uniform() * 50, uniform() * 2, Number((uniform() * 10).toFixed(1))]),
        bins: 2 + Math.floor(uniform() * 99),
      };
      if (Math.round(input.borderlineConfidence * 100) / 100 !== input.borderlineConfidence) offGrid++;
      expect(withoutQueue(certaintyView(demo.db, input))).toEqual(certaintyByRule(runId, columns, input));
    }
    expect(offGrid).toBeGreaterThan(1000);
  });

  it('give the borderline table its total: the same number, and exactly the customers the table lists', () => {
    for (let trial = 0; trial < 25; trial++) {
      const thresholds = { borderlineConfidence: anyThreshold(columns.confidence), borderlineMargin: anyThreshold(columns.margin) };
      const counts = certaintyView(demo.db, { runId, ...thresholds, atypicalPercentile: 1, bins: 20 });
      const listed: string[] = [];
      for (let offset = 0; ; offset += 1000) {
        const page = borderline(demo.db, { runId, ...thresholds, offset, limit: 1000 });
        expect(page.total).toBe(counts.borderline);
        listed.push(...page.rows.map((row) => row.customerId));
        if (page.rows.length < 1000) break;
      }
      expect(new Set(listed).size).toBe(counts.borderline);
    }
    // Without thresholds the table lists by the run's own, as the stored flags do.
    expect(borderline(demo.db, { runId, limit: 1 }).total).toBe(certaintyView(demo.db, { runId, borderlineConfidence: 0.7, borderlineMargin: 0.2, atypicalPercentile: 1, bins: 20 }).borderline);
  });

  it('equal the flag rule through the handler map, on a session of its own', async () => {
    const session = new ApiSession({ dbPath: demo.path, shell: 'cli' });
    try {
      for (const [borderlineConfidence, borderlineMargin, atypicalPercentile] of [
        [0.7, 0.2, 1],
        [0.99, 0.8, 10],
        [0.3, 0, 0],
        [1, 1, 50],
        [0, 0, 0.1],
        [0.123456789, 0.0456, 3.3],
      ]) {
        const input = { runId, borderlineConfidence, borderlineMargin, atypicalPercentile, bins: 20 };
        const answer = (await callApi(session, 'certainty', input)) as ApiOutput<'certainty'>;
        expect(withoutQueue(answer)).toEqual(certaintyByRule(runId, columns, input));
      }
    } finally {
      await session.close();
    }
  });

  it('are exact on values at the grid\'s edges, at 0 and 1, outside [0, 1] and NaN', () => {
    const edges = Array.from({ length: 101 }, (_, j) => j / 100);
    const specials = [...edges, ...edges.flatMap(neighbours), -0.5, 1.5, 0, 1, Number.NaN, -Infinity, Infinity];
    const n = 4000;
    const synthetic = { confidence: new Float64Array(n), margin: new Float64Array(n), logDensity: new Float64Array(n) };
    for (let i = 0; i < n; i++) {
      synthetic.confidence[i] = uniform() < 0.5 ? pick(specials) : uniform();
      synthetic.margin[i] = uniform() < 0.5 ? pick(specials) : uniform();
      synthetic.logDensity[i] = uniform() < 0.05 ? Number.NaN : pick([-3, -1, 0, 2, (uniform() - 0.5) * 20]);
    }
    const summary = buildCertaintySummary(synthetic);
    expect(summary.unbinned.confidence.length).toBeGreaterThan(0);
    for (let trial = 0; trial < 600; trial++) {
      const thresholds = {
        borderlineConfidence: uniform() < 0.7 ? pick(specials.filter((value) => !Number.isNaN(value))) : uniform(),
        borderlineMargin: uniform() < 0.7 ? pick(specials.filter((value) => !Number.isNaN(value))) : uniform(),
        atypicalPercentile: uniform() * 50,
      };
      const flags = computeFlags(synthetic.confidence, synthetic.margin, synthetic.logDensity, thresholds);
      expect(borderlineCount(summary, thresholds)).toBe(flags.borderline.reduce((sum, flag) => sum + flag, 0));
      expect(atypicalCount(summary, thresholds.atypicalPercentile)).toEqual({ atypical: flags.atypical.reduce((sum, flag) => sum + flag, 0), cut: flags.atypicalLogDensityBelow });
      const bins = 2 + Math.floor(uniform() * 99);
      expect(confidenceHistogram(summary, bins)).toEqual(certaintyByRule(0, synthetic, { ...thresholds, bins }).confidenceHistogram.map((bin) => bin.customers));
    }
  });
});

describe('the summary cache', () => {
  const rule = { borderlineConfidence: 0.7, borderlineMargin: 0.2, atypicalPercentile: 1, bins: 20 };

  it('is kept per run and connection, and review decisions and new names leave the counts as the rule gives them', () => {
    certaintyView(demo.db, { runId, ...rule });
    expect(hasCachedCertaintySummary(demo.db, runId)).toBe(true);
    const other = openDatabase(demo.path);
    try {
      expect(hasCachedCertaintySummary(other, runId)).toBe(false);
    } finally {
      other.close();
    }
    const queue = reviewQueue(demo.db, { runId, limit: 5 }).rows;
    expect(queue.length).toBeGreaterThan(1);
    decide(demo.db, { runId, customerId: queue[0].customerId, action: 'exclude' });
    decide(demo.db, { runId, customerId: queue[1].customerId, action: 'move', segment: listSegments(demo.db, runId).segments[0].segment });
    rename(demo.db, { runId, segment: listSegments(demo.db, runId).segments[0].segment, name: 'Weekly big baskets' });
    const reread = readColumnsByRule(demo.db, runId);
    expect(withoutQueue(certaintyView(demo.db, { runId, ...rule }))).toEqual(certaintyByRule(runId, reread, rule));
  });

  it('notices a run id freed by a deleted run and taken by a different run', async () => {
    const first = certaintyView(demo.db, { runId, ...rule });
    const scratch = (await runMonth(demo.db, { ...base, k: 2, covariance: 'spherical' })).runId;
    const before = certaintyView(demo.db, { runId: scratch, ...rule });
    demo.db.prepare('DELETE FROM runs WHERE run_id = ?').run(scratch);
    const replacement = (await runMonth(demo.db, { ...base, k: 5, covariance: 'diag', seed: 11, borderlineConfidence: 0.9 })).runId;
    expect(replacement).toBe(scratch);
    const after = certaintyView(demo.db, { runId: replacement, ...rule });
    expect(withoutQueue(after)).toEqual(certaintyByRule(replacement, readColumnsByRule(demo.db, replacement), rule));
    expect(after).not.toEqual(before);
    // The first run's summary is untouched by all this.
    expect(withoutQueue(certaintyView(demo.db, { runId, ...rule }))).toEqual(withoutQueue(first));
  });

  it('keeps a few runs and rebuilds the ones it let go, with the same answers', async () => {
    const runs = [runId];
    for (const seed of [21, 22, 23]) runs.push((await runMonth(demo.db, { ...base, seed })).runId);
    const answers = runs.map((id) => certaintyView(demo.db, { runId: id, ...rule }));
    expect(hasCachedCertaintySummary(demo.db, runs[0])).toBe(false);
    expect(runs.slice(1).every((id) => hasCachedCertaintySummary(demo.db, id))).toBe(true);
    expect(certaintyView(demo.db, { runId: runs[0], ...rule })).toEqual(answers[0]);
    expect(hasCachedCertaintySummary(demo.db, runs[0])).toBe(true);
  });

  it('refuses a run that does not exist with a clear message', () => {
    let error: unknown;
    try {
      certaintyView(demo.db, { runId: 999, ...rule });
    } catch (caught) {
      error = caught;
    }
    expect(isInputError(error)).toBe(true);
    expect(String((error as Error).message)).toMatch(/999/);
  });
});
