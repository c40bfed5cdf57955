import { readFileSync } from 'node:fs';
import { uniformInt } from 'pure-rand/distribution/uniformInt';
import { xoroshiro128plus } from 'pure-rand/generator/xoroshiro128plus';
import { describe, expect, it } from 'vitest';
import { InputError } from '../../src/errors.js';
import { adjustedRandIndex, adjustedRandIndexFromTable, contingencyTable } from '../../src/model/agreement.js';

const labels = (values: number[]) => Int32Array.from(values);

/** Pair counting straight from the definition, over all item pairs (no table), for cross-checks. */
function adjustedRandByPairs(a: Int32Array, b: Int32Array): number {
  // Hubert & Arabie (1985), Comparing partitions, J. Classification 2, 193–218 (from memory):
  // with Rand's pair counts, ARI = (index − expected) / (maximum − expected), where index counts
  // pairs together in both, and expected = together_a · together_b / all pairs.
  let together = 0;
  let togetherA = 0;
  let togetherB = 0;
  let all = 0;
  for (let i = 0; i < a.length; i++) {
    for (let j = i + 1; j < a.length; j++) {
      const sameA = a[i] === a[j];
      const sameB = b[i] === b[j];
      all += 1;
      if (sameA) togetherA += 1;
      if (sameB) togetherB += 1;
      if (sameA && sameB) together += 1;
    }
  }
  const expected = (togetherA * togetherB) / all;
  const maximum = (togetherA + togetherB) / 2;
  return maximum === expected ? 1 : (together - expected) / (maximum - expected);
}

describe('contingency table', () => {
  it('cross-tabulates a small labelling worked by hand', () => {
    // first:  0 0 0 0 0 1 1 2 2 2 2
    // second: 1 1 1 0 0 0 2 2 2 2 0
    //            second=0  1  2 | total
    // first=0         2  3  0 |   5
    // first=1         1  0  1 |   2
    // first=2         1  0  3 |   4
    // total           4  3  4 |  11
    const table = contingencyTable(labels([0, 0, 0, 0, 0, 1, 1, 2, 2, 2, 2]), labels([1, 1, 1, 0, 0, 0, 2, 2, 2, 2, 0]));
    expect(table.rows).toBe(3);
    expect(table.cols).toBe(3);
    expect(Array.from(table.counts)).toEqual([2, 3, 0, 1, 0, 1, 1, 0, 3]);
    expect(Array.from(table.rowTotals)).toEqual([5, 2, 4]);
    expect(Array.from(table.columnTotals)).toEqual([4, 3, 4]);
    expect(table.n).toBe(11);
  });

  it('keeps arbitrary labels, sorted ascending, through both the dense and the sparse path', () => {
    const first = labels([7, -1, 7, 3, -1]);
    const dense = contingencyTable(first, labels([0, 0, 1, 1, 1]));
    expect(Array.from(dense.rowLabels)).toEqual([-1, 3, 7]);
    expect(Array.from(dense.columnLabels)).toEqual([0, 1]);
    // label -1: items 1 and 4 (second 0 and 1) → [1, 1]; label 3: item 3 (second 1) → [0, 1];
    // label 7: items 0 and 2 (second 0 and 1) → [1, 1]
    expect(Array.from(dense.counts)).toEqual([1, 1, 0, 1, 1, 1]);
    // Labels far apart (span over a million) take the Map path; the table must be the same.
    const sparse = contingencyTable(labels([2_000_000_000, -5, 2_000_000_000, 3, -5]), labels([0, 0, 1, 1, 1]));
    expect(Array.from(sparse.rowLabels)).toEqual([-5, 3, 2_000_000_000]);
    expect(Array.from(sparse.counts)).toEqual(Array.from(dense.counts));
  });

  it('rejects labelings that do not line up', () => {
    expect(() => contingencyTable(labels([0, 1]), labels([0]))).toThrow(/2 labels against 1/);
    expect(() => contingencyTable(labels([]), labels([]))).toThrow(/empty/);
    expect(() => contingencyTable([0, 1] as unknown as Int32Array, labels([0, 1]))).toThrow(InputError);
  });
});

describe('adjusted Rand index', () => {
  it('follows Hubert & Arabie on small tables worked by hand', () => {
    // Definition: Hubert & Arabie (1985), Journal of Classification 2, 193–218 (from memory):
    //   ARI = (Σ C(nij,2) − E) / (½[Σ C(ai,2) + Σ C(bj,2)] − E),  E = Σ C(ai,2) · Σ C(bj,2) / C(n,2)

    // (1) first 0 0 0 1 1 1, second 0 0 1 1 1 1: table [[2, 1], [0, 3]]
    //     Σ C(nij,2) = 1 + 0 + 0 + 3 = 4; rows 3, 3 → 3 + 3 = 6; columns 2, 4 → 1 + 6 = 7; C(6,2) = 15
    //     E = 6·7/15 = 2.8; max = 6.5; ARI = (4 − 2.8)/(6.5 − 2.8) = 1.2/3.7 = 12/37
    expect(adjustedRandIndex(labels([0, 0, 0, 1, 1, 1]), labels([0, 0, 1, 1, 1, 1]))).toBeCloseTo(12 / 37, 15);

    // (2) first 0 0 1 1, second 0 1 0 1: every cell 1 → Σ C(nij,2) = 0; rows 1 + 1 = 2; columns 2
    //     C(4,2) = 6; E = 2·2/6 = 2/3; max = 2; ARI = (0 − 2/3)/(2 − 2/3) = −1/2
    expect(adjustedRandIndex(labels([0, 0, 1, 1]), labels([0, 1, 0, 1]))).toBeCloseTo(-0.5, 15);

    // (3) the 3 × 3 table of the contingency test: cells 2 3 0 / 1 0 1 / 1 0 3
    //     Σ C(nij,2) = 1 + 3 + 3 = 7; rows 5, 2, 4 → 10 + 1 + 6 = 17; columns 4, 3, 4 → 6 + 3 + 6 = 15
    //     C(11,2) = 55; E = 17·15/55 = 51/11; max = 16
    //     ARI = (7 − 51/11)/(16 − 51/11) = (26/11)/(125/11) = 26/125 = 0.208
    expect(adjustedRandIndex(labels([0, 0, 0, 0, 0, 1, 1, 2, 2, 2, 2]), labels([1, 1, 1, 0, 0, 0, 2, 2, 2, 2, 0]))).toBeCloseTo(0.208, 15);

    // (4) everything together against everything apart, n = 4: Σ C(nij,2) = 0; rows C(4,2) = 6;
    //     columns 0; E = 6·0/6 = 0; max = 3; ARI = 0/3 = 0
    expect(adjustedRandIndex(labels([5, 5, 5, 5]), labels([0, 1, 2, 3]))).toBe(0);
  });

  it('is 1 for identical and for relabelled partitions, including the trivial ones', () => {
    const first = labels([0, 0, 1, 1, 2, 2, 2, 3]);
    expect(adjustedRandIndex(first, first)).toBe(1);
    // Permuted label names: 0→3, 1→0, 2→1, 3→2 (a partition does not care what its parts are called).
    expect(adjustedRandIndex(first, labels([3, 3, 0, 0, 1, 1, 1, 2]))).toBe(1);
    // One cluster each, and all singletons each: the denominator is 0 and the partitions agree.
    expect(adjustedRandIndex(labels([1, 1, 1]), labels([4, 4, 4]))).toBe(1);
    expect(adjustedRandIndex(labels([0, 1, 2]), labels([2, 0, 1]))).toBe(1);
    expect(adjustedRandIndex(labels([9]), labels([3]))).toBe(1);
  });

  it('equals pair counting over all pairs on seeded random labelings, and is symmetric', () => {
    const rng = xoroshiro128plus(99);
    for (let trial = 0; trial < 40; trial++) {
      const n = uniformInt(rng, 2, 60);
      const ka = uniformInt(rng, 1, 6);
      const kb = uniformInt(rng, 1, 6);
      const a = Int32Array.from({ length: n }, () => uniformInt(rng, 0, ka - 1));
      const b = Int32Array.from({ length: n }, () => uniformInt(rng, 0, kb - 1));
      expect(adjustedRandIndex(a, b)).toBeCloseTo(adjustedRandByPairs(a, b), 12);
      expect(adjustedRandIndex(a, b)).toBeCloseTo(adjustedRandIndex(b, a), 14);
      expect(adjustedRandIndexFromTable(contingencyTable(a, b))).toBe(adjustedRandIndex(a, b));
    }
  });

  it('reproduces the values recorded from scikit-learn\'s adjusted_rand_score', () => {
    // Recorded by test/reference/record-sklearn.py (Debian's python3-sklearn, version in the JSON),
    // including seeded random pairs and iris species (Fisher 1936, R datasets) against k-means.
    const recorded = JSON.parse(readFileSync(new URL('../reference/sklearn-results.json', import.meta.url), 'utf8')) as {
      adjustedRand: { name: string; a: number[]; b: number[]; ari: number }[];
    };
    expect(recorded.adjustedRand.length).toBeGreaterThanOrEqual(10);
    for (const example of recorded.adjustedRand) {
      const value = adjustedRandIndex(labels(example.a), labels(example.b));
      expect(Math.abs(value - example.ari), example.name).toBeLessThan(1e-12);
    }
    const iris = recorded.adjustedRand.find((example) => example.name.startsWith('iris species'));
    expect(iris?.a).toHaveLength(150);
  });
});
