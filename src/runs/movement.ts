/**
 * Movement between a run and its parent (DESIGN.md §6): the parent × current segment count matrix
 * over customers placed in both, customers who entered and left, the adjusted Rand index on the
 * common customers, and drift warnings (a segment's mean moved more than half a parent standard
 * deviation on a feature, or its share changed by more than 5 percentage points).
 */
import { adjustedRandIndex } from '../model/index.js';
import { featureLabel } from '../features/definitions.js';
import { transformValue } from '../features/transforms.js';
import type { DriftWarning, MovementResult } from '../api/contract.js';
import type { ParentRun } from './parent.js';

/**
 * Movement as stored with a run (the runs table's movement column): segments by index, key and
 * the name they had then (reads take the current names by key), counts, and drift warnings.
 */
export type StoredMovement = Pick<MovementResult, 'common' | 'entered' | 'left' | 'warnings'> & {
  parentRunId: number;
  /** Row and column labels: parent segments (rows) and current segments (columns). */
  parentSegments: { index: number; key: string; name: string }[];
  currentSegments: { index: number; key: string; name: string }[];
  /** counts[i][j]: customers in parent segment i and current segment j (the result's matrix). */
  counts: number[][];
  /** The result's stability: null when fewer than two customers are common to both runs. */
  adjustedRandIndex: number | null;
  /** Refit only: parent segments without a match and current segments new this month. */
  retired: { key: string; name: string }[];
  added: { key: string; name: string }[];
};

/** Default thresholds of DESIGN.md §6. */
export const MEAN_SHIFT_STANDARD_DEVIATIONS = 0.5;
export const SHARE_CHANGE_POINTS = 5;

export interface Placement {
  /** Model segment per customer; -1 for customers in the run but not placed (too new). */
  segmentOf: ReadonlyMap<string, number>;
}

export interface MovementCounts {
  /** counts[i][j]: placed in parent segment i and current segment j. */
  counts: number[][];
  common: number;
  entered: number;
  left: number;
  /** Null when fewer than two customers are common to both runs. */
  adjustedRandIndex: number | null;
}

/**
 * Counts movement from parent to current placements. Segment indices are each run's own; the
 * matrix has parentK rows and currentK columns.
 */
export function countMovement(
  parent: ReadonlyMap<string, number>,
  current: ReadonlyMap<string, number>,
  parentK: number,
  currentK: number,
): MovementCounts {
  const counts = Array.from({ length: parentK }, () => new Array<number>(currentK).fill(0));
  const parentLabels: number[] = [];
  const currentLabels: number[] = [];
  let entered = 0;
  for (const [customerId, segment] of current) {
    if (segment < 0) continue;
    const before = parent.get(customerId);
    if (before === undefined || before < 0) {
      entered++;
      continue;
    }
    counts[before][segment]++;
    parentLabels.push(before);
    currentLabels.push(segment);
  }
  let left = 0;
  for (const [customerId, segment] of parent) {
    if (segment < 0) continue;
    const now = current.get(customerId);
    if (now === undefined || now < 0) left++;
  }
  const common = parentLabels.length;
  return {
    counts,
    common,
    entered,
    left,
    adjustedRandIndex: common >= 2 ? adjustedRandIndex(Int32Array.from(parentLabels), Int32Array.from(currentLabels)) : null,
  };
}

/** Per segment: members, mean and (population) standard deviation of each column. */
export interface SegmentMoments {
  counts: number[];
  /** means[s][j], standardDeviations[s][j]; NaN for an empty segment. */
  means: number[][];
  standardDeviations: number[][];
}

/** Moments of the columns over each segment's members (labels -1 are skipped, NaN values too). */
export function segmentMoments(columns: readonly Float64Array[], labels: Int32Array, k: number): SegmentMoments {
  const d = columns.length;
  const counts = new Array<number>(k).fill(0);
  const n = Array.from({ length: k }, () => new Float64Array(d));
  const sums = Array.from({ length: k }, () => new Float64Array(d));
  const squares = Array.from({ length: k }, () => new Float64Array(d));
  for (let i = 0; i < labels.length; i++) {
    const s = labels[i];
    if (s < 0) continue;
    counts[s]++;
    for (let j = 0; j < d; j++) {
      const value = columns[j][i];
      if (Number.isNaN(value)) continue;
      n[s][j]++;
      sums[s][j] += value;
    }
  }
  const means = sums.map((row, s) => Array.from(row, (sum, j) => (n[s][j] > 0 ? sum / n[s][j] : NaN)));
  for (let i = 0; i < labels.length; i++) {
    const s = labels[i];
    if (s < 0) continue;
    for (let j = 0; j < d; j++) {
      const value = columns[j][i];
      if (Number.isNaN(value)) continue;
      const centred = value - means[s][j];
      squares[s][j] += centred * centred;
    }
  }
  const standardDeviations = squares.map((row, s) => Array.from(row, (sum, j) => (n[s][j] > 0 ? Math.sqrt(sum / n[s][j]) : NaN)));
  return { counts, means, standardDeviations };
}

export interface DriftSegment {
  key: string;
  name: string;
  /** Share of the run's placed customers. */
  share: number;
  /** Member means per feature, in the parent's transformed space. */
  means: number[];
}

export interface DriftParentSegment extends DriftSegment {
  standardDeviations: number[];
}

/** Drift warnings for segments present (by key) in both runs. */
export function driftWarnings(
  features: readonly string[],
  parentSegments: readonly DriftParentSegment[],
  currentSegments: readonly DriftSegment[],
  thresholds = { meanShift: MEAN_SHIFT_STANDARD_DEVIATIONS, sharePoints: SHARE_CHANGE_POINTS },
): DriftWarning[] {
  const warnings: DriftWarning[] = [];
  const parentByKey = new Map(parentSegments.map((segment) => [segment.key, segment]));
  for (const segment of currentSegments) {
    const parent = parentByKey.get(segment.key);
    if (!parent) continue;
    features.forEach((feature, j) => {
      const spread = parent.standardDeviations[j];
      const shift = (segment.means[j] - parent.means[j]) / spread;
      if (spread > 0 && Number.isFinite(shift) && Math.abs(shift) > thresholds.meanShift) {
        warnings.push({
          segmentKey: segment.key,
          segmentName: segment.name,
          kind: 'mean-shift',
          feature,
          amount: shift,
          message: `${segment.name}: ${featureLabel(feature)} moved ${Math.abs(shift).toFixed(2)} standard deviations ${shift > 0 ? 'up' : 'down'} since last month.`,
        });
      }
    });
    const points = (segment.share - parent.share) * 100;
    if (Math.abs(points) > thresholds.sharePoints) {
      warnings.push({
        segmentKey: segment.key,
        segmentName: segment.name,
        kind: 'share-change',
        feature: null,
        amount: points,
        message: `${segment.name}: share of customers ${points > 0 ? 'rose' : 'fell'} by ${Math.abs(points).toFixed(1)} points (from ${(parent.share * 100).toFixed(1)}% to ${(segment.share * 100).toFixed(1)}%).`,
      });
    }
  }
  return warnings;
}

/** A run's placement as movement needs it. */
export interface RunPlacement {
  /** Every customer of the run: segment index, −1 when not placed (too new). */
  segmentOf: ReadonlyMap<string, number>;
  segments: readonly { index: number; key: string; name: string; origin: 'first' | 'matched' | 'new' }[];
  /** Share of the run's placed customers per segment index. */
  shares: readonly number[];
  /**
   * Stored features in original units of the placed customers: `columns[j][p]` of feature
   * `features[j]` for the p-th placed customer, whose segment is `labels[p]`.
   */
  features: readonly string[];
  columns: readonly Float64Array[];
  labels: Int32Array;
}

/**
 * Movement of a run against its parent: the count matrix, entered and left, the adjusted Rand
 * index on common customers, drift warnings (the run's segment means in the parent's transformed
 * space against the parent members' spread), and the parent segments without a continuation.
 */
export function movementAgainst(parent: ParentRun, current: RunPlacement): StoredMovement {
  const counted = countMovement(parent.segmentOf, current.segmentOf, parent.segments.length, current.segments.length);
  const columns = parent.features.map((name) => {
    const j = current.features.indexOf(name);
    return Float64Array.from(current.labels, (_, p) => (j >= 0 ? transformValue(name, parent.transforms[name], current.columns[j][p]) : NaN));
  });
  const now = segmentMoments(columns, current.labels, current.segments.length);
  const warnings = driftWarnings(
    parent.features,
    parent.segments.map((segment) => ({
      ...segment,
      means: parent.moments.means[segment.index],
      standardDeviations: parent.moments.standardDeviations[segment.index],
    })),
    current.segments.map((segment) => ({ key: segment.key, name: segment.name, share: current.shares[segment.index], means: now.means[segment.index] })),
  );
  const currentKeys = new Set(current.segments.map((segment) => segment.key));
  return {
    parentRunId: parent.runId,
    parentSegments: parent.segments.map(({ index, key, name }) => ({ index, key, name })),
    currentSegments: current.segments.map(({ index, key, name }) => ({ index, key, name })),
    counts: counted.counts,
    common: counted.common,
    entered: counted.entered,
    left: counted.left,
    adjustedRandIndex: counted.adjustedRandIndex,
    warnings,
    retired: parent.segments.filter((segment) => !currentKeys.has(segment.key)).map(({ key, name }) => ({ key, name })),
    added: current.segments.filter((segment) => segment.origin === 'new').map(({ key, name }) => ({ key, name })),
  };
}
