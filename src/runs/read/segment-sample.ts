/**
 * The Segments screen's scatter sample and per-segment distributions, read from the run's display
 * sample (src/runs/display-sample.ts: at most 20,000 placed customers drawn once with the run's
 * seed), so their cost never grows with the run.
 */
import type { Database } from 'better-sqlite3';
import type { FeatureDistribution, SegmentSample } from '../../api/contract.js';
import { InputError } from '../../errors.js';
import { featureUnit } from '../../features/definitions.js';
import { transformValue } from '../../features/transforms.js';
import { decodeFloat64 } from '../blobs.js';
import { DISTRIBUTION_SAMPLE_SIZE } from '../display-sample.js';
import { runSegments } from './run-segments.js';
import { storedRun } from './stored-run.js';

/**
 * Up to `limit` rows of the run's display sample: positions from `start` on, wrapping round.
 * Reads at most the sample, whatever the run's size.
 */
function displaySampleRows(db: Database, runId: number, start: number, limit: number, size: number): [string, number, Buffer][] {
  return db
    .prepare(
      `SELECT customer_id, segment_index, features FROM run_samples
       WHERE run_id = @runId AND ((position - @start + @size) % @size) < @limit
       ORDER BY (position - @start + @size) % @size`,
    )
    .raw()
    .all({ runId, start, limit, size: Math.max(1, size) }) as [string, number, Buffer][];
}

function displaySampleSize(db: Database, runId: number): number {
  return db.prepare('SELECT count(*) FROM run_samples WHERE run_id = ?').pluck().get(runId) as number;
}

/**
 * Up to `limit` customers of the run's display sample (uniform, drawn with the run's seed), with
 * their features in model space and original units, for the scatter plots.
 */
export function segmentSample(db: Database, query: { runId: number; limit: number; seed: number }): SegmentSample {
  const { runId, limit, seed } = query;
  const run = storedRun(db, runId);
  // The seed picks where in the stored random order the sample starts; any stretch of it is uniform.
  const size = displaySampleSize(db, runId);
  const rows = displaySampleRows(db, runId, size > 0 ? ((seed % size) * (limit % size)) % size : 0, limit, size);
  const featureCount = run.features.length;
  return {
    runId,
    totalCustomers: run.customers,
    features: run.features,
    points: rows.map(([customerId, segment, blob]) => {
      const original = Array.from(decodeFloat64(blob).subarray(0, featureCount));
      return {
        customerId,
        segment,
        model: run.features.map((feature, j) => transformValue(feature, run.transforms[feature], original[j])),
        original,
      };
    }),
  };
}

/**
 * A histogram per segment of one stored feature, in original units, over the first 10,000 of the
 * display sample (the result says how many), so its cost does not grow with the run. Bins span
 * the 1st to 99th percentile so a few extreme customers do not squash the rest into one bar.
 */
export function featureDistribution(db: Database, query: { runId: number; feature: string; bins: number }): FeatureDistribution {
  const { runId, feature, bins } = query;
  const run = storedRun(db, runId);
  const column = run.storedFeatures.indexOf(feature);
  if (column < 0) throw new InputError(`Run ${runId} has no feature "${feature}"; it stores ${run.storedFeatures.join(', ')}.`);
  const rows = displaySampleRows(db, runId, 0, DISTRIBUTION_SAMPLE_SIZE, displaySampleSize(db, runId));
  const values: { segment: number; value: number }[] = [];
  for (const [, segment, blob] of rows) {
    const value = decodeFloat64(blob)[column];
    if (Number.isFinite(value)) values.push({ segment, value });
  }
  const sorted = values.map((entry) => entry.value).sort((a, b) => a - b);
  const at = (p: number) => (sorted.length === 0 ? 0 : sorted[Math.min(sorted.length - 1, Math.floor(p * (sorted.length - 1)))]);
  const low = at(0.01);
  const high = at(0.99) > low ? at(0.99) : low + 1;
  const width = (high - low) / bins;
  const edges = Array.from({ length: bins + 1 }, (_, b) => low + b * width);
  const segments = [...runSegments(db, runId).list].sort((a, b) => a.spendRank - b.spendRank).map((segment) => segment.index);
  const counts = new Map(segments.map((segment) => [segment, new Array<number>(bins).fill(0)]));
  for (const { segment, value } of values) {
    const b = Math.min(bins - 1, Math.max(0, Math.floor((value - low) / width)));
    counts.get(segment)![b] += 1;
  }
  return {
    runId,
    feature,
    unit: featureUnit(feature),
    edges,
    counts: segments.map((segment) => ({ segment, counts: counts.get(segment)! })),
    customersUsed: values.length,
    totalCustomers: run.customers,
  };
}
