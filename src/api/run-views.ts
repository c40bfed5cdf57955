import type { Database } from 'better-sqlite3';
import { featureDescriptions, isComputedFeature } from '../features/definitions.js';
import { transformValue, type FeatureTransform } from '../features/transforms.js';
import { modelFromJSON, type MixtureModel } from '../model/index.js';
import { decodeFloat64 } from '../runs/blobs.js';
import { DISTRIBUTION_SAMPLE_SIZE } from '../runs/display-sample.js';
import { getMovement, getReviewQueue, getRunDetail, listSegments } from '../runs/repository.js';
import type { RunDetail as CoreRunDetail, SegmentProfile as CoreSegmentProfile } from '../runs/types.js';
import { InputError } from '../errors.js';
import { atypicalCount, borderlineCount, confidenceHistogram, runCertaintySummary } from './certainty-summary.js';
import type {
  ApiParsedInput,
  CertaintySummary,
  FeatureDistribution,
  FeatureTransformSpec,
  MovementResult,
  ReviewItem,
  RunDetail,
  RunSettings,
  SegmentProfile,
  SegmentSample,
  SegmentsResult,
} from './contract.js';

/**
 * Views of a stored run in the contract's shapes: the runs core's read functions, mapped, plus
 * the aggregates the screens need that are computed here over the run's stored memberships
 * (confidence histogram and live threshold counts, a seeded sample for scatter plots, feature
 * distributions per segment) so that no screen ever aggregates customers itself.
 */

/** Unit of any feature, computed or imported (imported ones have none we know of). */
function unitOf(feature: string): string {
  return isComputedFeature(feature) ? featureDescriptions[feature].unit : '';
}

function transformSpec(feature: string, transform: FeatureTransform): FeatureTransformSpec {
  return {
    feature,
    log1p: transform.log1p,
    clipLowerPercentile: transform.clipLowerPercentile,
    clipUpperPercentile: transform.clipUpperPercentile,
    zScore: transform.zScore,
  };
}

/** A run's stored model, features and fitted transforms (the model column of the runs table). */
interface RunModel {
  model: MixtureModel;
  features: string[];
  storedFeatures: string[];
  transforms: Record<string, FeatureTransform>;
}

function runModel(db: Database, runId: number, detail: CoreRunDetail = getRunDetail(db, runId)): RunModel {
  const modelJson = db.prepare('SELECT model FROM runs WHERE run_id = ?').pluck().get(runId) as string;
  return { model: modelFromJSON(JSON.parse(modelJson)), features: detail.features, storedFeatures: detail.storedFeatures, transforms: detail.transforms };
}

export function runDetailView(db: Database, runId: number): RunDetail {
  const detail = getRunDetail(db, runId);
  const { settings } = detail;
  const contractSettings: RunSettings = {
    asOf: settings.asOf,
    windowMonths: settings.windowMonths,
    mode: settings.mode,
    parentRunId: settings.parentRunId,
    features: detail.features.map((feature) => transformSpec(feature, detail.transforms[feature])),
    k: settings.k,
    kMin: settings.kMin,
    kMax: settings.kMax,
    covariance: settings.covariance,
    criterion: settings.criterion,
    restarts: settings.restarts,
    seed: settings.seed,
    borderlineConfidence: settings.borderlineConfidence,
    borderlineMargin: settings.borderlineMargin,
    atypicalPercentile: settings.atypicalPercentile,
    minPurchases: settings.minPurchases,
    minTenureMonths: settings.minTenureMonths,
  };
  return {
    ...detail.summary,
    asOf: settings.asOf,
    windowMonths: settings.windowMonths,
    mode: settings.mode,
    createdAt: detail.createdAt,
    settings: contractSettings,
    features: contractSettings.features!,
    storedFeatures: detail.storedFeatures,
    logLikelihood: detail.logLikelihood,
    icl: detail.icl,
    criterion: detail.criterion,
    retiredSegments: detail.retired.map((segment) => segment.name),
    warnings: detail.warnings,
  };
}

function segmentView(segment: CoreSegmentProfile, model: MixtureModel): SegmentProfile {
  const d = model.dimensions;
  const c = segment.index;
  return {
    segment: c,
    key: segment.key,
    name: segment.name,
    spendRank: segment.spendRank,
    customers: segment.customers,
    share: segment.share,
    revenue: segment.revenue,
    revenueShare: segment.revenueShare,
    profile: Object.entries(segment.features)
      .filter((entry): entry is [string, NonNullable<(typeof entry)[1]>] => entry[1] !== null)
      .map(([feature, quartiles]) => ({ feature, unit: unitOf(feature), ...quartiles })),
    weight: model.weights[c],
    mean: Array.from(model.means.subarray(c * d, (c + 1) * d)),
    covariance: Array.from(model.covariances.subarray(c * d * d, (c + 1) * d * d)),
  };
}

export function segmentsView(db: Database, runId: number): SegmentsResult {
  const { model, features } = runModel(db, runId);
  return { runId, features, segments: listSegments(db, runId).map((segment) => segmentView(segment, model)) };
}

export function segmentProfileView(db: Database, runId: number, segmentIndex: number): SegmentProfile {
  const found = segmentsView(db, runId).segments.find((segment) => segment.segment === segmentIndex);
  if (!found) throw new InputError(`Run ${runId} has no segment ${segmentIndex}.`);
  return found;
}

export function movementView(db: Database, runId: number): MovementResult {
  const movement = getMovement(db, runId);
  const current = listSegments(db, runId).map((segment) => ({ segment: segment.index, name: segment.name }));
  if (!movement) {
    return {
      runId,
      parentRunId: null,
      parentSegments: [],
      currentSegments: current,
      matrix: [],
      common: 0,
      entered: 0,
      left: 0,
      stability: null,
      warnings: [],
      retired: [],
      added: [],
    };
  }
  return {
    runId,
    parentRunId: movement.parentRunId,
    parentSegments: movement.parentSegments.map((segment) => ({ segment: segment.index, name: segment.name })),
    currentSegments: movement.currentSegments.map((segment) => ({ segment: segment.index, name: segment.name })),
    matrix: movement.counts,
    common: movement.common,
    entered: movement.entered,
    left: movement.left,
    stability: movement.adjustedRandIndex,
    warnings: movement.warnings.map(({ segmentName, kind, feature, amount, message }) => ({ segmentName, kind, feature, amount, message })),
    retired: movement.retired.map((segment) => segment.name),
    added: movement.added.map((segment) => segment.name),
  };
}

/**
 * One customer's review item, read from the queue at the customer's own position in its order
 * (spend at stake descending, then id), so it costs one indexed count and one one-row page.
 */
export function reviewItemView(db: Database, runId: number, customerId: string): ReviewItem {
  const row = db
    .prepare('SELECT revenue_cents FROM run_memberships WHERE run_id = ? AND customer_id = ? AND review > 0')
    .get(runId, customerId) as { revenue_cents: number } | undefined;
  if (!row) throw new InputError(`Customer "${customerId}" is not in the review queue of run ${runId}.`);
  const position = db
    .prepare(
      `SELECT count(*) FROM run_memberships WHERE run_id = ? AND review > 0
         AND (revenue_cents > ? OR (revenue_cents = ? AND customer_id < ?))`,
    )
    .pluck()
    .get(runId, row.revenue_cents, row.revenue_cents, customerId) as number;
  const item = getReviewQueue(db, runId, { offset: position, limit: 1, status: 'all' }).items[0];
  if (!item || item.customerId !== customerId) throw new Error(`The review queue of run ${runId} lost customer ${customerId}.`);
  return item;
}

// ---------------------------------------------------------------------------------------------
// Aggregates over a run's memberships

/**
 * Counts under the sliders' thresholds, exactly as the runs core's flag rule (computeFlags) gives
 * them, answered from the run's cached certainty summary (src/api/certainty-summary.ts) so that
 * slider moves cost milliseconds at any run size.
 */
export function certaintyView(db: Database, input: ApiParsedInput<'certainty'>): CertaintySummary {
  const summary = runCertaintySummary(db, input.runId);
  const { atypical, cut } = atypicalCount(summary, input.atypicalPercentile);
  const histogram = confidenceHistogram(summary, input.bins);
  return {
    runId: input.runId,
    customers: summary.customers,
    confidenceHistogram: histogram.map((customers, b) => ({ from: b / input.bins, to: (b + 1) / input.bins, customers })),
    borderline: borderlineCount(summary, input),
    atypical,
    atypicalLogDensityBelow: cut,
  };
}

/** Placed customers of a run (stored with the run, so no scan of its memberships). */
function placedCustomers(db: Database, runId: number): number {
  return db.prepare('SELECT customers FROM runs WHERE run_id = ?').pluck().get(runId) as number;
}

/**
 * Up to `limit` rows of the run's display sample (src/runs/display-sample.ts): positions from
 * `start` on, wrapping round. Reads at most the sample (20,000 rows), whatever the run's size.
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
 * Up to `limit` customers of the run's stored display sample (uniform, drawn with the run's
 * seed), with their features in model space and original units, for the scatter plots.
 */
export function segmentSampleView(db: Database, input: ApiParsedInput<'segmentSample'>): SegmentSample {
  const { runId, limit, seed } = input;
  const model = runModel(db, runId);
  const total = placedCustomers(db, runId);
  // The seed picks where in the stored random order the sample starts; any stretch of it is uniform.
  const size = displaySampleSize(db, runId);
  const rows = displaySampleRows(db, runId, size > 0 ? ((seed % size) * (limit % size)) % size : 0, limit, size);
  const featureCount = model.features.length;
  return {
    runId,
    totalCustomers: total,
    features: model.features,
    points: rows.map(([customerId, segment, blob]) => {
      const stored = decodeFloat64(blob);
      const original = Array.from(stored.subarray(0, featureCount));
      return {
        customerId,
        segment,
        model: model.features.map((feature, j) => transformValue(feature, model.transforms[feature], original[j])),
        original,
      };
    }),
  };
}

/**
 * A histogram per segment of one stored feature, in original units, over the run's display
 * sample (its first 10,000 placed customers; the result says how many), so its cost does not grow
 * with the run. Bins span the 1st to 99th percentile so a few extreme customers do not squash
 * the rest into one bar.
 */
export function featureDistributionView(db: Database, input: ApiParsedInput<'featureDistribution'>): FeatureDistribution {
  const { runId, feature, bins } = input;
  const detail = getRunDetail(db, runId);
  const column = detail.storedFeatures.indexOf(feature);
  if (column < 0) throw new InputError(`Run ${runId} has no feature "${feature}"; it stores ${detail.storedFeatures.join(', ')}.`);
  const total = placedCustomers(db, runId);
  const rows = displaySampleRows(db, runId, 0, DISTRIBUTION_SAMPLE_SIZE, displaySampleSize(db, runId)).map(([, segment, blob]) => [segment, blob] as const);
  const values: { segment: number; value: number }[] = [];
  for (const [segment, blob] of rows) {
    const value = decodeFloat64(blob)[column];
    if (Number.isFinite(value)) values.push({ segment, value });
  }
  const sorted = values.map((entry) => entry.value).sort((a, b) => a - b);
  const at = (p: number) => (sorted.length === 0 ? 0 : sorted[Math.min(sorted.length - 1, Math.floor(p * (sorted.length - 1)))]);
  const low = at(0.01);
  const high = at(0.99) > low ? at(0.99) : low + 1;
  const width = (high - low) / bins;
  const edges = Array.from({ length: bins + 1 }, (_, b) => low + b * width);
  const segments = listSegments(db, runId).map((segment) => segment.index);
  const counts = new Map(segments.map((segment) => [segment, new Array<number>(bins).fill(0)]));
  for (const { segment, value } of values) {
    const b = Math.min(bins - 1, Math.max(0, Math.floor((value - low) / width)));
    counts.get(segment)![b] += 1;
  }
  return {
    runId,
    feature,
    unit: unitOf(feature),
    edges,
    counts: segments.map((segment) => ({ segment, counts: counts.get(segment)! })),
    customersUsed: values.length,
    totalCustomers: total,
  };
}

