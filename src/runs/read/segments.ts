/** Segment profiles with the model's components (the Segments screen's cards and ellipses). */
import type { Database } from 'better-sqlite3';
import type { SegmentProfile, SegmentsResult } from '../../api/contract.js';
import { InputError } from '../../errors.js';
import { featureUnit } from '../../features/definitions.js';
import { runSegments, type RunSegments, type StoredSegment } from './run-segments.js';
import { runModel, storedRun } from './stored-run.js';

function profileOf(db: Database, segments: RunSegments, segment: StoredSegment): SegmentProfile {
  const model = runModel(db, segments.runId);
  const d = model.dimensions;
  const c = segment.index;
  const stored = segments.profileOf(c);
  return {
    segment: c,
    key: segment.key,
    name: segment.name,
    spendRank: segment.spendRank,
    origin: segment.origin,
    customers: segment.customers,
    share: segment.share,
    revenue: segment.revenueCents / 100,
    revenueShare: segment.revenueShare,
    profile: Object.entries(stored.features)
      .filter((entry): entry is [string, NonNullable<(typeof entry)[1]>] => entry[1] !== null)
      .map(([feature, quartiles]) => ({ feature, unit: featureUnit(feature), ...quartiles })),
    weight: model.weights[c],
    mean: Array.from(model.means.subarray(c * d, (c + 1) * d)),
    covariance: Array.from(model.covariances.subarray(c * d * d, (c + 1) * d * d)),
  };
}

/** Every segment of the run in spend order. */
export function listSegments(db: Database, runId: number): SegmentsResult {
  const run = storedRun(db, runId);
  const segments = runSegments(db, runId);
  const bySpend = [...segments.list].sort((a, b) => a.spendRank - b.spendRank);
  return { runId, features: run.features, segments: bySpend.map((segment) => profileOf(db, segments, segment)) };
}

/** One segment of the run by its model index. */
export function segmentProfile(db: Database, runId: number, index: number): SegmentProfile {
  storedRun(db, runId);
  const segments = runSegments(db, runId);
  const segment = segments.list.find((candidate) => candidate.index === index);
  if (!segment) throw new InputError(`Run ${runId} has no segment ${index}.`);
  return profileOf(db, segments, segment);
}
