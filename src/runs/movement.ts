/**
 * Movement between a run and its parent (DESIGN.md §6): the parent × current segment count matrix
 * over customers placed in both, customers who entered and left, the adjusted Rand index on the
 * common customers, and drift warnings (a segment's mean moved more than half a parent standard
 * deviation on a feature, or its share changed by more than 5 percentage points).
 */
import { adjustedRandIndex } from '../model/index.js';
import { featureLabel } from '../features/definitions.js';
import type { DriftWarning, MovementResult } from '../api/contract.js';

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
