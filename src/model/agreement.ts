/**
 * Agreement between two labelings of the same items: the contingency table (the movement matrix
 * between two months is one) and the adjusted Rand index (stability of a refresh).
 */
import { InputError } from '../errors.js';

/**
 * Cross-tabulation of two labelings of the same n items.
 * - rowLabels: the distinct labels of the first labeling, ascending (length rows)
 * - columnLabels: the distinct labels of the second labeling, ascending (length cols)
 * - counts: rows × cols, row-major: `counts[r * cols + c]` items labelled rowLabels[r] first and
 *   columnLabels[c] second
 * - rowTotals (rows) and columnTotals (cols): the margins; n: number of items
 */
export interface ContingencyTable {
  rowLabels: Int32Array;
  columnLabels: Int32Array;
  rows: number;
  cols: number;
  counts: Float64Array;
  rowTotals: Float64Array;
  columnTotals: Float64Array;
  n: number;
}

/** Label spans up to this size are indexed through a dense array instead of a Map (speed). */
const denseLabelSpan = 1 << 20;

/** Distinct labels ascending, and each item's index among them. */
function indexLabels(labels: Int32Array): { distinct: Int32Array; indices: Int32Array } {
  const n = labels.length;
  const indices = new Int32Array(n);
  let min = labels[0];
  let max = labels[0];
  for (let i = 1; i < n; i++) {
    const label = labels[i];
    if (label < min) min = label;
    else if (label > max) max = label;
  }
  const span = max - min + 1;
  if (span <= denseLabelSpan) {
    const slot = new Int32Array(span).fill(-1);
    for (let i = 0; i < n; i++) slot[labels[i] - min] = 0;
    let count = 0;
    for (let s = 0; s < span; s++) if (slot[s] === 0) slot[s] = count++;
    const distinct = new Int32Array(count);
    for (let s = 0; s < span; s++) if (slot[s] >= 0) distinct[slot[s]] = s + min;
    for (let i = 0; i < n; i++) indices[i] = slot[labels[i] - min];
    return { distinct, indices };
  }
  const distinct = Int32Array.from(new Set(labels)).sort();
  const slotOf = new Map<number, number>();
  distinct.forEach((label, index) => slotOf.set(label, index));
  for (let i = 0; i < n; i++) indices[i] = slotOf.get(labels[i])!;
  return { distinct, indices };
}

function validateLabelPair(first: Int32Array, second: Int32Array): void {
  if (!(first instanceof Int32Array) || !(second instanceof Int32Array)) {
    throw new InputError('Both labelings must be Int32Arrays.');
  }
  if (first.length !== second.length) {
    throw new InputError(`The two labelings must cover the same items: ${first.length} labels against ${second.length}.`);
  }
  if (first.length === 0) throw new InputError('There are no items to compare: both labelings are empty.');
}

/** Cross-tabulates two labelings of the same items (any Int32 labels, not necessarily 0..k−1). */
export function contingencyTable(first: Int32Array, second: Int32Array): ContingencyTable {
  validateLabelPair(first, second);
  const rowIndex = indexLabels(first);
  const columnIndex = indexLabels(second);
  const rows = rowIndex.distinct.length;
  const cols = columnIndex.distinct.length;
  const counts = new Float64Array(rows * cols);
  const rowTotals = new Float64Array(rows);
  const columnTotals = new Float64Array(cols);
  const n = first.length;
  for (let i = 0; i < n; i++) {
    const r = rowIndex.indices[i];
    const c = columnIndex.indices[i];
    counts[r * cols + c] += 1;
    rowTotals[r] += 1;
    columnTotals[c] += 1;
  }
  return {
    rowLabels: rowIndex.distinct,
    columnLabels: columnIndex.distinct,
    rows,
    cols,
    counts,
    rowTotals,
    columnTotals,
    n,
  };
}

/** Number of unordered pairs among m items, m(m−1)/2. */
function pairsOf(m: number): number {
  return (m * (m - 1)) / 2;
}

/**
 * Adjusted Rand index from a contingency table (Hubert & Arabie 1985):
 *   ARI = (Σᵢⱼ C(nᵢⱼ,2) − E) / (½[Σᵢ C(aᵢ,2) + Σⱼ C(bⱼ,2)] − E),  E = Σᵢ C(aᵢ,2) Σⱼ C(bⱼ,2) / C(n,2)
 * 1 for identical partitions (whatever the label names), about 0 for unrelated ones, may be
 * negative. When the denominator is 0 both partitions are the same trivial one (all items
 * together, or every item alone), and the index is 1.
 */
export function adjustedRandIndexFromTable(table: ContingencyTable): number {
  let sumCells = 0;
  for (let i = 0; i < table.counts.length; i++) sumCells += pairsOf(table.counts[i]);
  let sumRows = 0;
  for (let r = 0; r < table.rows; r++) sumRows += pairsOf(table.rowTotals[r]);
  let sumColumns = 0;
  for (let c = 0; c < table.cols; c++) sumColumns += pairsOf(table.columnTotals[c]);
  const allPairs = pairsOf(table.n);
  const maximum = (sumRows + sumColumns) / 2;
  const expected = allPairs === 0 ? 0 : (sumRows * sumColumns) / allPairs;
  const denominator = maximum - expected;
  if (denominator === 0) return 1;
  return (sumCells - expected) / denominator;
}

/** Adjusted Rand index of two labelings of the same items (Hubert & Arabie 1985). */
export function adjustedRandIndex(first: Int32Array, second: Int32Array): number {
  return adjustedRandIndexFromTable(contingencyTable(first, second));
}
