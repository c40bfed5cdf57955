import { describe, expect, it } from 'vitest';
import { carryNames, defaultTierName, nameFirstRun, spendRanks, uniqueName } from '../../src/runs/naming.js';
import { countMovement, driftWarnings, segmentMoments } from '../../src/runs/movement.js';
import { carriesOver, finalSegmentKey, isLowConfidenceMover, reviewMask, reviewReasons } from '../../src/runs/review-rules.js';
import { computeFlags } from '../../src/runs/flags.js';

describe('segment names in spend order', () => {
  it('ranks by mean spend, empty segments last', () => {
    expect(spendRanks([50, 300, NaN, 120])).toEqual([3, 1, 4, 2]);
    expect(nameFirstRun([50, 300, 120]).map((s) => [s.key, s.name])).toEqual([
      ['S3', 'Tier 3 — lowest spend'],
      ['S1', 'Tier 1 — highest spend'],
      ['S2', 'Tier 2'],
    ]);
    expect(defaultTierName(1, 1)).toBe('Tier 1 — all customers');
  });

  it('carries matched names, names new segments uniquely, reports retired ones', () => {
    const parent = [
      { index: 0, key: 'S1', name: 'Big baskets' },
      { index: 1, key: 'S2', name: 'Tier 2' },
      { index: 2, key: 'S3', name: 'Tier 3 — lowest spend' },
    ];
    // Child 0 ↔ parent 2, child 2 ↔ parent 1, child 1 new; parent 0 retired. Child spend: 10, 500, 80.
    const { segments, retired } = carryNames(parent, [{ parent: 2, child: 0 }, { parent: 1, child: 2 }], [10, 500, 80], 4);
    expect(segments.map((s) => [s.key, s.name, s.origin, s.spendRank])).toEqual([
      ['S3', 'Tier 3 — lowest spend', 'matched', 3],
      ['S4', 'Tier 1 — highest spend', 'new', 1],
      ['S2', 'Tier 2', 'matched', 2],
    ]);
    expect(retired).toEqual([{ key: 'S1', name: 'Big baskets' }]);
    expect(uniqueName('Tier 2', new Set(['Tier 2', 'Tier 2 (new)']))).toBe('Tier 2 (new 2)');
  });
});

describe('movement on plain arrays', () => {
  it('counts the matrix over common customers, entered and left; ARI by Hubert & Arabie', () => {
    const parent = new Map([['a', 0], ['b', 0], ['c', 1], ['d', 1], ['e', 1], ['f', -1], ['g', 0]]);
    const current = new Map([['a', 0], ['b', 1], ['c', 1], ['d', 1], ['e', 1], ['f', 0], ['h', 1]]);
    const moved = countMovement(parent, current, 2, 2);
    // Common placed: a b c d e. a 0→0, b 0→1, c d e 1→1. f was too new (entered), h is new, g lapsed.
    expect(moved.counts).toEqual([[1, 1], [0, 3]]);
    expect(moved.common).toBe(5);
    expect(moved.counts.flat().reduce((x, y) => x + y, 0)).toBe(moved.common);
    expect(moved.entered).toBe(2);
    expect(moved.left).toBe(1);
    // Hand-worked ARI on the table [[1,1],[0,3]]: Σ C(n_ij,2) = 0 + 0 + 0 + 3 = 3; rows (2, 3) → 1 + 3 = 4;
    // columns (1, 4) → 0 + 6 = 6; C(5,2) = 10; expected 4·6/10 = 2.4; max ½(4 + 6) = 5;
    // ARI = (3 − 2.4) / (5 − 2.4) = 0.230769…
    expect(moved.adjustedRandIndex).toBeCloseTo(0.6 / 2.6, 12);
  });

  it('drift: a mean shift beyond half a parent standard deviation and a share change beyond 5 points', () => {
    const columns = [Float64Array.from([0, 2, 10, 12])];
    const moments = segmentMoments(columns, Int32Array.from([0, 0, 1, -1]), 2);
    expect(moments.counts).toEqual([2, 1]);
    expect(moments.means[0][0]).toBe(1);
    expect(moments.standardDeviations[0][0]).toBe(1);
    const warnings = driftWarnings(
      ['spend_per_month'],
      [
        { key: 'S1', name: 'Tier 1', share: 0.3, means: [1], standardDeviations: [1] },
        { key: 'S2', name: 'Tier 2', share: 0.7, means: [5], standardDeviations: [2] },
      ],
      [
        { key: 'S1', name: 'Tier 1', share: 0.36, means: [1.6] },
        { key: 'S2', name: 'Tier 2', share: 0.64, means: [5.9] },
        { key: 'S9', name: 'New', share: 0, means: [0] },
      ],
    );
    // S1: shift 0.6 sd (> 0.5) and share +6 points (> 5); S2: shift 0.45 sd, share −6 points.
    expect(warnings.map((w) => [w.segmentKey, w.kind, Number(w.amount.toFixed(6))])).toEqual([
      ['S1', 'mean-shift', 0.6],
      ['S1', 'share-change', 6],
      ['S2', 'share-change', -6],
    ]);
    expect(warnings[0].message).toBe('Tier 1: spend per month moved 0.60 standard deviations up since last month.');
  });
});

describe('flags and review rules', () => {
  it('borderline below 0.70 confidence or 0.20 margin; atypical below the 1st percentile of log density', () => {
    const confidence = Float64Array.from([0.95, 0.69, 0.7, 0.58]);
    const margin = Float64Array.from([0.9, 0.38, 0.19, 0.2]);
    const logDensity = Float64Array.from([-1, -2, -3, -50]);
    const flags = computeFlags(confidence, margin, logDensity, { borderlineConfidence: 0.7, borderlineMargin: 0.2, atypicalPercentile: 1 });
    expect(Array.from(flags.borderline)).toEqual([0, 1, 1, 1]);
    // 1st percentile (type 7) of −50, −3, −2, −1: −50 + 0.03 · 47 = −48.59; only −50 is below.
    expect(flags.atypicalLogDensityBelow).toBeCloseTo(-48.59, 10);
    expect(Array.from(flags.atypical)).toEqual([0, 0, 0, 1]);
  });

  it('final segment follows the decision; exclusions always carry over, moves only to live segments', () => {
    const keys = new Set(['S1', 'S2']);
    expect(finalSegmentKey('S1', null, keys)).toEqual({ key: 'S1', excluded: false });
    expect(finalSegmentKey('S1', { action: 'move', segmentKey: 'S2' }, keys)).toEqual({ key: 'S2', excluded: false });
    expect(finalSegmentKey('S1', { action: 'keep', segmentKey: 'S2' }, keys)).toEqual({ key: 'S2', excluded: false });
    expect(finalSegmentKey('S1', { action: 'move', segmentKey: 'S7' }, keys)).toEqual({ key: 'S1', excluded: false });
    expect(finalSegmentKey('S1', { action: 'exclude', segmentKey: null }, keys)).toEqual({ key: 'S1', excluded: true });
    expect(carriesOver({ action: 'exclude', segmentKey: null }, keys)).toBe(true);
    expect(carriesOver({ action: 'move', segmentKey: 'S7' }, keys)).toBe(false);
    expect(reviewReasons(reviewMask(true, false, true))).toEqual(['borderline', 'mover']);
    expect(isLowConfidenceMover('S1', 'S2', 0.6, 0.8)).toBe(true);
    expect(isLowConfidenceMover('S1', 'S2', 0.6, null)).toBe(false);
    expect(isLowConfidenceMover('S2', 'S2', 0.6, 0.8)).toBe(false);
  });
});
