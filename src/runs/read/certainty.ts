import type { Database } from 'better-sqlite3';
import type { CertaintyQuery, CertaintySummary } from '../../api/contract.js';
import { InputError } from '../../errors.js';
import { countBelowSorted, quantileOfSorted, sortedFinite } from '../../features/quantiles.js';
import { isBorderline, type FlagThresholds } from '../flags.js';
import { queueCounts } from './review-counts.js';
import { derivedFromRun, holdsDerived, storedRun } from './stored-run.js';

/**
 * The Certainty screen's numbers, all from one source: a compact per-run summary of the placed
 * customers' certainty columns, built in one pass and kept with the run per database connection
 * (./stored-run.ts), so that the sliders are answered in milliseconds at any run size. The
 * histogram, the borderline and atypical counts, and the borderline table's total
 * (./borderline.ts) all come from it. The counts are exactly those of the runs core's flag rule
 * (`computeFlags` in src/runs/flags.ts) for any thresholds:
 *
 * - borderline: a grid over (confidence, margin) whose bin edges are j / 100, so every value the
 *   sliders can set (step 0.01) is an edge and is answered from suffix sums of the grid. The
 *   customers' values are kept ordered by cell, so a threshold between edges is answered exactly
 *   by scanning only the one row and one column of cells it cuts.
 * - atypical: the sorted log densities; the percentile's cut is the same quantile the flag rule
 *   takes, and the count below it is one binary search.
 *
 * A stored run's memberships change only when its segments are regrouped, which bumps the run's
 * revision; the summary is kept with the run's entry (./stored-run.ts), whose fingerprint
 * includes the revision, so a regrouped run gets a new summary.
 */

/** Grid steps per unit: the sliders move in steps of 0.01 (renderer/src/screens/Certainty.tsx). */
const GRID_STEPS = 100;
/** Bin edges j / GRID_STEPS, computed as the division so that e.g. 0.7 === EDGES[70]. */
const EDGES = Float64Array.from({ length: GRID_STEPS + 1 }, (_, j) => j / GRID_STEPS);
/** Bins per axis: below 0, the GRID_STEPS bins of [0, 1), and at or above 1. */
const BINS = GRID_STEPS + 2;

/** Bin of a value = the number of edges at or below it (0 for values below 0, or NaN). */
function binOf(value: number): number {
  if (!(value >= 0)) return 0;
  if (value >= 1) return BINS - 1;
  let bin = Math.floor(value * GRID_STEPS) + 1;
  // The product may round across an edge; the comparisons with the edges themselves decide.
  while (bin > 1 && value < EDGES[bin - 1]) bin--;
  while (bin < BINS - 1 && value >= EDGES[bin]) bin++;
  return bin;
}

export interface RunCertaintySummary {
  /** Placed customers (memberships with a segment). */
  customers: number;
  /** Start of each (confidence bin, margin bin) cell in the ordered columns, row-major; BINS² + 1 entries. */
  cellStart: Int32Array;
  /** Customers at or above bin (i, j) on both axes: (BINS + 1)² entries, zero on the far borders. */
  atLeast: Int32Array;
  /** Confidence and margin of the binned customers, ordered by cell. */
  confidence: Float64Array;
  margin: Float64Array;
  /** Customers with a NaN confidence or margin: judged one by one by the flag rule. */
  unbinned: { confidence: Float64Array; margin: Float64Array };
  /** Log densities ascending, NaN left out (as the flag rule's quantile does). */
  sortedLogDensity: Float64Array;
  /** Confidence histograms already asked for, by bin count. */
  histograms: Map<number, number[]>;
}

/** Certainty columns of a run's placed customers, read in one pass. */
export interface CertaintyColumns {
  confidence: Float64Array;
  margin: Float64Array;
  logDensity: Float64Array;
}

export function readCertaintyColumns(db: Database, runId: number): CertaintyColumns {
  const hint = storedRun(db, runId).customers;
  let capacity = Math.max(16, hint);
  let confidence: Float64Array = new Float64Array(capacity);
  let margin: Float64Array = new Float64Array(capacity);
  let logDensity: Float64Array = new Float64Array(capacity);
  let n = 0;
  const rows = db
    .prepare('SELECT confidence, margin, log_density FROM run_memberships WHERE run_id = ? AND segment_index IS NOT NULL')
    .raw()
    .iterate(runId) as Iterable<[number | null, number | null, number | null]>;
  for (const [c, m, d] of rows) {
    if (n === capacity) {
      capacity *= 2;
      confidence = grown(confidence, capacity);
      margin = grown(margin, capacity);
      logDensity = grown(logDensity, capacity);
    }
    // A NULL read as NaN, as the Float64Array columns the flag rule is given would hold it.
    confidence[n] = c ?? NaN;
    margin[n] = m ?? NaN;
    logDensity[n] = d ?? NaN;
    n++;
  }
  return { confidence: confidence.subarray(0, n), margin: margin.subarray(0, n), logDensity: logDensity.subarray(0, n) };
}

function grown(values: Float64Array, capacity: number): Float64Array {
  const next = new Float64Array(capacity);
  next.set(values);
  return next;
}

/** Builds the summary from a run's columns: a counting sort into the grid's cells. */
export function buildCertaintySummary(columns: CertaintyColumns): RunCertaintySummary {
  const n = columns.confidence.length;
  const cellOf = new Int32Array(n);
  const cellCount = new Int32Array(BINS * BINS + 1);
  let unbinnedCount = 0;
  for (let i = 0; i < n; i++) {
    const c = columns.confidence[i];
    const m = columns.margin[i];
    if (Number.isNaN(c) || Number.isNaN(m)) {
      cellOf[i] = -1;
      unbinnedCount++;
      continue;
    }
    const cell = binOf(c) * BINS + binOf(m);
    cellOf[i] = cell;
    cellCount[cell + 1]++;
  }
  const cellStart = cellCount;
  for (let cell = 1; cell < cellStart.length; cell++) cellStart[cell] += cellStart[cell - 1];
  const binned = n - unbinnedCount;
  const confidence = new Float64Array(binned);
  const margin = new Float64Array(binned);
  const unbinned = { confidence: new Float64Array(unbinnedCount), margin: new Float64Array(unbinnedCount) };
  const next = cellStart.slice(0, BINS * BINS);
  let u = 0;
  for (let i = 0; i < n; i++) {
    const cell = cellOf[i];
    if (cell < 0) {
      unbinned.confidence[u] = columns.confidence[i];
      unbinned.margin[u++] = columns.margin[i];
      continue;
    }
    const at = next[cell]++;
    confidence[at] = columns.confidence[i];
    margin[at] = columns.margin[i];
  }
  const side = BINS + 1;
  const atLeast = new Int32Array(side * side);
  for (let row = BINS - 1; row >= 0; row--) {
    for (let col = BINS - 1; col >= 0; col--) {
      const cell = row * BINS + col;
      atLeast[row * side + col] =
        cellStart[cell + 1] - cellStart[cell] + atLeast[(row + 1) * side + col] + atLeast[row * side + col + 1] - atLeast[(row + 1) * side + col + 1];
    }
  }
  return {
    customers: n,
    cellStart,
    atLeast,
    confidence,
    margin,
    unbinned,
    sortedLogDensity: sortedFinite(columns.logDensity),
    histograms: new Map(),
  };
}

/** Where a threshold falls on one axis: its bin, and whether it is that bin's lower edge. */
function axisPosition(threshold: number): { bin: number; onEdge: boolean } {
  const bin = binOf(threshold);
  return { bin, onEdge: bin >= 1 && threshold === EDGES[bin - 1] };
}

/** Placed customers the flag rule calls borderline under these thresholds. */
export function borderlineCount(summary: RunCertaintySummary, thresholds: Pick<FlagThresholds, 'borderlineConfidence' | 'borderlineMargin'>): number {
  const { borderlineConfidence, borderlineMargin } = thresholds;
  if (Number.isNaN(borderlineConfidence) || Number.isNaN(borderlineMargin)) throw new InputError('Borderline thresholds must be numbers.');
  const { cellStart, atLeast, confidence, margin } = summary;
  const rowAt = axisPosition(borderlineConfidence);
  const colAt = axisPosition(borderlineMargin);
  // Cells past the threshold's bin (or from it, when the threshold is its lower edge) are wholly
  // at or above it; the cut row and column are scanned value by value.
  const firstFullRow = rowAt.onEdge ? rowAt.bin : rowAt.bin + 1;
  const firstFullCol = colAt.onEdge ? colAt.bin : colAt.bin + 1;
  let atOrAbove = atLeast[firstFullRow * (BINS + 1) + firstFullCol];
  const bothAtOrAbove = (at: number) => (confidence[at] >= borderlineConfidence && margin[at] >= borderlineMargin ? 1 : 0);
  if (!rowAt.onEdge) {
    // Row-major order: the cut row's cells from the margin's bin on are one contiguous stretch.
    const end = cellStart[rowAt.bin * BINS + BINS];
    for (let at = cellStart[rowAt.bin * BINS + colAt.bin]; at < end; at++) atOrAbove += bothAtOrAbove(at);
  }
  if (!colAt.onEdge) {
    for (let row = firstFullRow; row < BINS; row++) {
      const cell = row * BINS + colAt.bin;
      for (let at = cellStart[cell]; at < cellStart[cell + 1]; at++) atOrAbove += bothAtOrAbove(at);
    }
  }
  let borderline = confidence.length - atOrAbove;
  const { unbinned } = summary;
  for (let i = 0; i < unbinned.confidence.length; i++) {
    if (isBorderline(unbinned.confidence[i], unbinned.margin[i], { borderlineConfidence, borderlineMargin, atypicalPercentile: 0 })) borderline++;
  }
  return borderline;
}

/** The flag rule's atypical cut for a percentile, and how many customers lie strictly below it. */
export function atypicalCount(summary: RunCertaintySummary, atypicalPercentile: number): { atypical: number; cut: number } {
  const sorted = summary.sortedLogDensity;
  const cut = atypicalPercentile > 0 ? quantileOfSorted(sorted, atypicalPercentile / 100) : -Infinity;
  return { atypical: countBelowSorted(sorted, cut), cut };
}

/** Placed customers per confidence bin of [0, 1], as the screen's histogram draws them. */
export function confidenceHistogram(summary: RunCertaintySummary, bins: number): number[] {
  const known = summary.histograms.get(bins);
  if (known) return known;
  const histogram = new Array<number>(bins).fill(0);
  const add = (values: Float64Array) => {
    for (let i = 0; i < values.length; i++) {
      const bin = Math.min(bins - 1, Math.floor(values[i] * bins));
      if (bin >= 0) histogram[bin] += 1; // NaN and negative confidences fall in no bin
    }
  };
  add(summary.confidence);
  add(summary.unbinned.confidence);
  summary.histograms.set(bins, histogram);
  return histogram;
}

// ---------------------------------------------------------------------------------------------
// The summary kept with the run, and the screen's answer

const SUMMARY = 'certainty summary';

/** The run's summary, built on first use and kept for the run's later calls on this connection. */
export function runCertaintySummary(db: Database, runId: number): RunCertaintySummary {
  return derivedFromRun(db, runId, SUMMARY, () => buildCertaintySummary(readCertaintyColumns(db, runId)));
}

/** Whether a summary of the run is held for this connection (for tests of the cache). */
export function hasCachedCertaintySummary(db: Database, runId: number): boolean {
  return holdsDerived(db, runId, SUMMARY);
}

/** Histogram and counts under the sliders' thresholds, answered from the run's summary. */
export function certaintySummary(db: Database, query: CertaintyQuery): CertaintySummary {
  const summary = runCertaintySummary(db, query.runId);
  const { atypical, cut } = atypicalCount(summary, query.atypicalPercentile);
  const histogram = confidenceHistogram(summary, query.bins);
  return {
    runId: query.runId,
    customers: summary.customers,
    confidenceHistogram: histogram.map((customers, b) => ({ from: b / query.bins, to: (b + 1) / query.bins, customers })),
    borderline: borderlineCount(summary, query),
    atypical,
    atypicalLogDensityBelow: cut,
    queue: queueCounts(db, query.runId),
  };
}
