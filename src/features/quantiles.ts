/**
 * Quantiles by linear interpolation between order statistics (R's type 7, numpy's default
 * "linear" method, per their documentation): q(p) = x[h] + (h − ⌊h⌋)(x[⌊h⌋+1] − x[⌊h⌋]) with
 * h = (n − 1) p on the sorted values. NaN values are ignored.
 */

/** Sorted copy of the finite values (NaN dropped). */
export function sortedFinite(values: ArrayLike<number>): Float64Array {
  let count = 0;
  for (let i = 0; i < values.length; i++) if (!Number.isNaN(values[i])) count++;
  const sorted = new Float64Array(count);
  let at = 0;
  for (let i = 0; i < values.length; i++) if (!Number.isNaN(values[i])) sorted[at++] = values[i];
  return sorted.sort();
}

/** Quantile p ∈ [0, 1] of already sorted values; NaN when there are none. */
export function quantileOfSorted(sorted: ArrayLike<number>, p: number): number {
  const n = sorted.length;
  if (n === 0) return NaN;
  const h = (n - 1) * p;
  const low = Math.floor(h);
  const high = Math.min(low + 1, n - 1);
  return sorted[low] + (h - low) * (sorted[high] - sorted[low]);
}

export function quantile(values: ArrayLike<number>, p: number): number {
  return quantileOfSorted(sortedFinite(values), p);
}

/** How many values of an ascending array lie strictly below x (binary search). */
export function countBelowSorted(sorted: ArrayLike<number>, x: number): number {
  let low = 0;
  let high = sorted.length;
  while (low < high) {
    const middle = (low + high) >>> 1;
    if (sorted[middle] < x) low = middle + 1;
    else high = middle;
  }
  return low;
}
