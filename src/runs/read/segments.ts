/** Segment profiles with the model's components (the Segments screen's cards and ellipses). */
import type { Database } from 'better-sqlite3';
import type { ComponentShape, SegmentProfile, SegmentsResult } from '../../api/contract.js';
import { InputError } from '../../errors.js';
import { featureUnit } from '../../features/definitions.js';
import type { MixtureModel } from '../../model/index.js';
import { runSegments, type RunSegments, type StoredSegment } from './run-segments.js';
import { runModel, storedRun } from './stored-run.js';

function componentShape(model: MixtureModel, component: number, segment: number): ComponentShape {
  const d = model.dimensions;
  return {
    component,
    segment,
    weight: model.weights[component],
    mean: Array.from(model.means.subarray(component * d, (component + 1) * d)),
    covariance: Array.from(model.covariances.subarray(component * d * d, (component + 1) * d * d)),
  };
}

/**
 * A segment as one distribution: the summed weight of its components, and the mean and covariance
 * of their mixture, Σ w_c Σ_c / W + Σ w_c (μ_c − μ)(μ_c − μ)ᵀ / W (the component's own for one).
 */
function segmentMoments(model: MixtureModel, components: readonly number[]): { weight: number; mean: number[]; covariance: number[] } {
  const d = model.dimensions;
  const weight = components.reduce((sum, c) => sum + model.weights[c], 0);
  const mean = new Array<number>(d).fill(0);
  for (const c of components) for (let j = 0; j < d; j++) mean[j] += (model.weights[c] * model.means[c * d + j]) / weight;
  const covariance = new Array<number>(d * d).fill(0);
  for (const c of components) {
    const share = model.weights[c] / weight;
    for (let a = 0; a < d; a++) {
      for (let b = 0; b < d; b++) {
        const spread = (model.means[c * d + a] - mean[a]) * (model.means[c * d + b] - mean[b]);
        covariance[a * d + b] += share * (model.covariances[c * d * d + a * d + b] + spread);
      }
    }
  }
  return { weight, mean, covariance };
}

function profileOf(db: Database, segments: RunSegments, segment: StoredSegment): SegmentProfile {
  const model = runModel(db, segments.runId);
  const stored = segments.profileOf(segment.index);
  return {
    segment: segment.index,
    key: segment.key,
    name: segment.name,
    defaultName: segment.defaultName,
    renamed: segment.renamed,
    traits: segments.traitsOf(segment.index),
    spendRank: segment.spendRank,
    origin: segment.origin,
    customers: segment.customers,
    share: segment.share,
    revenue: segment.revenueCents / 100,
    revenueShare: segment.revenueShare,
    profile: Object.entries(stored.features)
      .filter((entry): entry is [string, NonNullable<(typeof entry)[1]>] => entry[1] !== null)
      .map(([feature, quartiles]) => ({ feature, unit: featureUnit(feature), ...quartiles })),
    components: segment.components,
    ...segmentMoments(model, segment.components),
  };
}

/** Every segment of the run in spend order, and every component with its segment. */
export function listSegments(db: Database, runId: number): SegmentsResult {
  const run = storedRun(db, runId);
  const segments = runSegments(db, runId);
  const model = runModel(db, runId);
  const bySpend = [...segments.list].sort((a, b) => a.spendRank - b.spendRank);
  return {
    runId,
    features: run.features,
    segments: bySpend.map((segment) => profileOf(db, segments, segment)),
    components: Array.from({ length: model.components }, (_, c) => componentShape(model, c, segments.segmentOfComponent[c])),
  };
}

/** One segment of the run by its index. */
export function segmentProfile(db: Database, runId: number, index: number): SegmentProfile {
  storedRun(db, runId);
  const segments = runSegments(db, runId);
  const segment = segments.list.find((candidate) => candidate.index === index);
  if (!segment) throw new InputError(`Run ${runId} has no segment ${index}.`);
  return profileOf(db, segments, segment);
}
