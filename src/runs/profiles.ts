/**
 * Segment profiles in money terms: members, share of placed customers, revenue (net spend in the
 * window) and its share, and median and quartiles of every stored feature in original units.
 */
import { quantileOfSorted } from '../features/quantiles.js';

/** Median and quartiles of one feature over a segment's members, in original units (as stored with the run). */
export interface StoredQuartiles {
  q1: number;
  median: number;
  q3: number;
}

export interface ProfileNumbers {
  customers: number;
  share: number;
  revenueCents: number;
  revenueShare: number;
  features: Record<string, StoredQuartiles | null>;
}

/**
 * Profiles of k segments from hard labels (-1 = not placed, skipped). `columns[j]` holds feature
 * `names[j]` per customer; revenueCents per customer.
 */
export function segmentProfiles(
  names: readonly string[],
  columns: readonly Float64Array[],
  revenueCents: Float64Array,
  labels: Int32Array,
  k: number,
): ProfileNumbers[] {
  const counts = new Array<number>(k).fill(0);
  const revenue = new Array<number>(k).fill(0);
  for (let i = 0; i < labels.length; i++) {
    const s = labels[i];
    if (s < 0) continue;
    counts[s]++;
    revenue[s] += revenueCents[i];
  }
  const placed = counts.reduce((a, b) => a + b, 0);
  const totalRevenue = revenue.reduce((a, b) => a + b, 0);
  // Members' positions per segment, then one sort per segment and feature.
  const offsets = new Int32Array(k + 1);
  for (let s = 0; s < k; s++) offsets[s + 1] = offsets[s] + counts[s];
  const fill = offsets.slice(0, k);
  const members = new Int32Array(placed);
  for (let i = 0; i < labels.length; i++) if (labels[i] >= 0) members[fill[labels[i]]++] = i;
  return counts.map((customers, s) => {
    const features: Record<string, StoredQuartiles | null> = {};
    names.forEach((name, j) => {
      const column = columns[j];
      const values = new Float64Array(customers);
      let count = 0;
      for (let m = offsets[s]; m < offsets[s + 1]; m++) {
        const value = column[members[m]];
        if (!Number.isNaN(value)) values[count++] = value;
      }
      const sorted = values.subarray(0, count).sort();
      features[name] = count === 0 ? null : { q1: quantileOfSorted(sorted, 0.25), median: quantileOfSorted(sorted, 0.5), q3: quantileOfSorted(sorted, 0.75) };
    });
    return {
      customers,
      share: placed > 0 ? customers / placed : 0,
      revenueCents: revenue[s],
      revenueShare: totalRevenue !== 0 ? revenue[s] / totalRevenue : 0,
      features,
    };
  });
}
