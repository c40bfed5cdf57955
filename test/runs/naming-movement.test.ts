import { describe, expect, it } from 'vitest';
import { defaultNames, nameSegments, rhythmWords, segmentTraits, spendRanks, traitWords, uniqueName, withStickyWords } from '../../src/runs/naming.js';
import { continuations, withSegmentsShownBefore } from '../../src/runs/carry-keys.js';
import { countMovement, driftWarnings, segmentMoments } from '../../src/runs/movement.js';
import { carriesOver, finalSegmentKey, isLowConfidenceMover, reviewMask, reviewReasons } from '../../src/runs/review-rules.js';
import { computeFlags } from '../../src/runs/flags.js';

/** Ten placed customers' values of the three name traits (sorted), 0.5 … 9.5 apart so percentiles are tenths. */
const sorted = new Map(
  ['visits_per_month', 'average_basket', 'gaps_since_last_visit'].map((feature) => [feature, Float64Array.from({ length: 10 }, (_, i) => i + 1)]),
);

describe('segment names from measured traits', () => {
  it('ranks by mean spend, empty segments last', () => {
    expect(spendRanks([50, 300, NaN, 120])).toEqual([3, 1, 4, 2]);
  });

  it('places each trait median among all customers and says it in five bands, in the order how often · per trip · how recently', () => {
    // Medians 9.5 (9 of 10 below → 0.9), 2.5 (0.2), 1 (0.0); fresh share is not stored here, so it is left out.
    const traits = segmentTraits(
      { gaps_since_last_visit: 0.1, average_basket: 2.5, visits_per_month: 9.5, fresh_share: 0.3 },
      sorted,
      ['gaps_since_last_visit', 'fresh_share', 'average_basket', 'visits_per_month'],
    );
    // How recently is said by the median in the customers' own gaps, not by its rank (0 here).
    expect(traits.map((t) => [t.feature, t.percentile, t.words])).toEqual([
      ['visits_per_month', 0.9, 'very frequent'],
      ['average_basket', 0.2, 'small baskets'],
      ['gaps_since_last_visit', 0, 'just been in'],
    ]);
    expect(traits[0].label).toBe('visit rate');
    expect(traitWords('average_basket', 0.79)).toBe('large baskets');
    expect(traitWords('spend_per_month', 0.1)).toBe('very low spend');
    // Above 99 % of customers the top band is split off, so business buyers do not read like a household tier.
    expect(traitWords('spend_per_month', 0.98)).toBe('very high spend');
    expect(traitWords('spend_per_month', 0.995)).toBe('top 1 % spend');
    expect(traitWords('average_basket', 0.999)).toBe('top 1 % baskets');
    expect(traitWords('refund_share', 0.99)).toBe('top 1 % refund share');
    // Recency against the customer's own rhythm: a steady shopper's median is ln 2 ≈ 0.69 usual gaps.
    expect([0.1, 0.249, 0.25, 0.69, 1.99, 2, 3.99, 4, 40].map(rhythmWords)).toEqual([
      'just been in',
      'just been in',
      'on their usual rhythm',
      'on their usual rhythm',
      'on their usual rhythm',
      'overdue',
      'overdue',
      'long absent',
      'long absent',
    ]);
    // Days since the last visit by rank: "long ago" (a rare shopper's last visit is, without being absent).
    expect(traitWords('days_since_last_visit', 0.85)).toBe('long ago');
    expect(traitWords('spend_trend', 0.85)).toBe('very high spend trend');
    const names = defaultNames([traits], [1]);
    expect(names).toEqual(['Very frequent · small baskets · just been in']);
    // No word of a named customer scheme, only restated measurements.
    expect(names[0]).not.toMatch(/champion|loyal|risk|hibernat|tier/i);
  });

  it('leads with spend where the run stores it: how much · how often · per trip · how recently', () => {
    const candidates = ['visits_per_month', 'average_basket', 'gaps_since_last_visit', 'spend_per_month'];
    const withSpend = new Map([...sorted, ['spend_per_month', Float64Array.from({ length: 10 }, (_, i) => 10 * (i + 1))]]);
    // Spend median 95: 9 of 10 customers below it, the top band.
    const traitsWithGaps = (gaps: number) =>
      segmentTraits({ visits_per_month: 5.5, average_basket: 9.5, gaps_since_last_visit: gaps, spend_per_month: 95 }, withSpend, candidates);
    const traits = traitsWithGaps(0.7);
    expect(traits.map((t) => t.feature)).toEqual(['spend_per_month', 'visits_per_month', 'average_basket', 'gaps_since_last_visit']);
    // Keeping to their rhythm sets no segment apart: the name leaves it out (the trait keeps its words).
    expect(traits[3].words).toBe('on their usual rhythm');
    expect(defaultNames([traits], [1])).toEqual(['Very high spend · regular · very large baskets']);
    expect(defaultNames([traitsWithGaps(2.5), traitsWithGaps(6)], [1, 2])).toEqual([
      'Very high spend · regular · very large baskets · overdue',
      'Very high spend · regular · very large baskets · long absent',
    ]);
  });

  it('makes clashing names unique by the next trait, then by spend rank', () => {
    const candidates = ['visits_per_month', 'average_basket', 'gaps_since_last_visit', 'spend_per_month', 'fresh_share'];
    const withMore = new Map([
      ...sorted,
      ['spend_per_month', Float64Array.from({ length: 10 }, (_, i) => 10 * (i + 1))],
      ['fresh_share', Float64Array.from({ length: 10 }, (_, i) => (i + 1) / 10)],
    ]);
    const traitsOf = (spend: number, fresh: number) =>
      segmentTraits({ visits_per_month: 9.5, average_basket: 9.5, gaps_since_last_visit: 0.1, spend_per_month: spend, fresh_share: fresh }, withMore, candidates);
    const [a, b, c] = [traitsOf(95, 0.95), traitsOf(45, 0.15), traitsOf(47, 0.95)];
    // a differs by its spend word; b and c share theirs, so each adds its next trait (the mix).
    expect(defaultNames([a, b, c], [1, 3, 2])).toEqual([
      'Very high spend · very frequent · very large baskets · just been in',
      'Mid spend · very frequent · very large baskets · just been in · very little fresh',
      'Mid spend · very frequent · very large baskets · just been in · very fresh-heavy',
    ]);
    // Agreeing on every trait, the spend rank tells them apart.
    const d = traitsOf(47, 0.15);
    expect(defaultNames([b, d], [3, 2])).toEqual([
      'Mid spend · very frequent · very large baskets · just been in · very little fresh · spend rank 3',
      'Mid spend · very frequent · very large baskets · just been in · very little fresh · spend rank 2',
    ]);
    expect(defaultNames([[]], [4])).toEqual(['Spend rank 4']);
  });

  it('keys: continuing segments keep key, origin and renames; new ones get fresh keys in spend order', () => {
    const continues = [
      { key: 'S2', name: 'Weekend regulars', renamed: true, origin: 'matched' as const },
      null,
      { key: 'S1', name: 'Old default', renamed: false, origin: 'matched' as const },
      null,
    ];
    const named = nameSegments(['Rare · small baskets', 'Frequent · large baskets', 'Regular', 'Weekend regulars'], [3, 1, 2, 4], continues, 7, 'new');
    expect(named.map((s) => [s.key, s.name, s.defaultName, s.renamed, s.origin, s.spendRank])).toEqual([
      ['S2', 'Weekend regulars', 'Rare · small baskets', true, 'matched', 3],
      ['S7', 'Frequent · large baskets', 'Frequent · large baskets', false, 'new', 1],
      // Not renamed: the new default replaces the old one.
      ['S1', 'Regular', 'Regular', false, 'matched', 2],
      // A default that clashes with a kept rename gets a number.
      ['S8', 'Weekend regulars (2)', 'Weekend regulars', false, 'new', 4],
    ]);
    expect(uniqueName('Regular', new Set(['Regular', 'Regular (2)']))).toBe('Regular (3)');
    const first = nameSegments(['A', 'B'], [2, 1], [null, null], 1, 'first');
    expect(first.map((s) => [s.key, s.origin])).toEqual([['S2', 'first'], ['S1', 'first']]);
    // Two segments carrying the same rename (one brought back by a regroup): names stay unique.
    const winBack = (key: string) => ({ key, name: 'Win-back list', renamed: true, origin: 'first' as const });
    const twice = nameSegments(['A', 'B', 'Win-back list (2)'], [2, 1, 3], [winBack('S5'), winBack('S2'), null], 9, 'first');
    expect(twice.map((s) => [s.key, s.name, s.renamed])).toEqual([
      ['S5', 'Win-back list (2)', true],
      ['S2', 'Win-back list', true],
      ['S9', 'Win-back list (2) (2)', false],
    ]);
  });

  it('a continuing segment keeps a word near the edge of its fifth, and says the new one once the rank is clearly past it', () => {
    const trait = (feature: string, percentile: number, words = traitWords(feature, percentile)) => ({ feature, label: feature, median: 1, unit: '', percentile, words });
    const spend = (percentile: number, earlier: ReturnType<typeof trait>[]) => withStickyWords([trait('spend_per_month', percentile)], earlier)[0];
    // October 0.211 said "low spend"; November 0.183 would say "very low spend" but is within 5 points of 0.20.
    const november = spend(0.183, [trait('spend_per_month', 0.211)]);
    expect(november).toMatchObject({ words: 'low spend', kept: true, percentile: 0.183 });
    // December from November's kept word: still near (0.16), then clearly past (0.14).
    expect(spend(0.16, [november])).toMatchObject({ words: 'low spend', kept: true });
    expect(spend(0.14, [november])).toMatchObject({ words: 'very low spend' });
    expect(spend(0.14, [november]).kept).toBeUndefined();
    // Upward too, and the top band's "top 1 %" edge has a tenth of the margin.
    expect(spend(0.645, [trait('spend_per_month', 0.59)]).words).toBe('mid spend');
    expect(spend(0.66, [trait('spend_per_month', 0.59)]).words).toBe('high spend');
    expect(spend(0.987, [trait('spend_per_month', 0.995)]).words).toBe('top 1 % spend');
    expect(spend(0.98, [trait('spend_per_month', 0.995)]).words).toBe('very high spend');
    expect(spend(0.993, [trait('spend_per_month', 0.95)]).words).toBe('very high spend');
    // Unchanged words, no earlier trait, or words these rules do not say: the new trait as it is.
    expect(spend(0.3, [trait('spend_per_month', 0.35)]).kept).toBeUndefined();
    expect(spend(0.183, [trait('visits_per_month', 0.211)]).words).toBe('very low spend');
    expect(spend(0.183, [trait('spend_per_month', 0.211, 'modest spenders')]).words).toBe('very low spend');
    expect(withStickyWords([trait('spend_per_month', 0.183)], undefined)[0].words).toBe('very low spend');
    // Stored traits that are not a list of traits (a database edited by hand) keep nothing.
    expect(withStickyWords([trait('spend_per_month', 0.183)], { feature: 'spend_per_month' } as never)[0].words).toBe('very low spend');
    expect(withStickyWords([trait('spend_per_month', 0.183)], [null, { feature: 'spend_per_month', words: 3 }] as never)[0].words).toBe('very low spend');
  });

  it('a continuing segment keeps its rhythm word while the median gaps stay within a quarter of the band edge', () => {
    const gaps = (median: number, earlierWords: string) => {
      const trait = { feature: 'gaps_since_last_visit', label: 'gaps since last visit', median, unit: 'usual gaps', percentile: 0.5, words: rhythmWords(median) };
      return withStickyWords([trait], [{ feature: 'gaps_since_last_visit', words: earlierWords }])[0];
    };
    // The edges are 0.25, 2 and 4 usual gaps; the earlier word stays down to edge / 1.25 and up to edge × 1.25.
    expect(gaps(1.7, 'overdue')).toMatchObject({ words: 'overdue', kept: true });
    expect(gaps(1.5, 'overdue').words).toBe('on their usual rhythm');
    expect(gaps(2.4, 'on their usual rhythm')).toMatchObject({ words: 'on their usual rhythm', kept: true });
    expect(gaps(2.6, 'on their usual rhythm').words).toBe('overdue');
    expect(gaps(3.3, 'long absent')).toMatchObject({ words: 'long absent', kept: true });
    expect(gaps(3.1, 'long absent').words).toBe('overdue');
    expect(gaps(0.3, 'just been in')).toMatchObject({ words: 'just been in', kept: true });
    expect(gaps(0.35, 'just been in').words).toBe('on their usual rhythm');
    // Words of the earlier percentile-banded rhythm (or any other) are not kept.
    expect(gaps(2.1, 'past their usual gap').words).toBe('overdue');
    expect(gaps(2.1, 'past their usual gap').kept).toBeUndefined();
  });

  it('continuation: Hungarian pairing on shared customers, a pair counts only with half of either side', () => {
    // Best assignment (unique): earlier 0 ↔ current 1 (90), earlier 1 ↔ current 0 (30), earlier 2 ↔ current 2 (10) = 130.
    // Earlier 1 → current 0: 30 of its 55 (over half) continues; earlier 2 → current 2: 10 of its 100 and 10 of
    // current 2's 40: under half of both, so current 2 is new and earlier 2 retired.
    const counts = [
      [5, 90, 5],
      [30, 0, 25],
      [10, 80, 10],
    ];
    expect(continuations(counts, 3)).toEqual([1, 0, null]);
    // Earlier 0 spreads evenly: its best pair (current 0, 20 customers) is a third of it and 20 of current 0's 70.
    expect(continuations([[20, 20, 20], [25, 40, 0], [25, 0, 40]], 3)).toEqual([null, 1, 2]);
    // More current segments than earlier ones: the extra one is new.
    expect(continuations([[10, 0], [0, 1]], 3)).toEqual([0, 1, null]);
  });

  it('within a run, exact components take an earlier segment back; a continuation whose key is taken back is new; a key is taken once', () => {
    const shown = [
      { key: 'S5', components: [4] },
      { key: 'S2', components: [3, 0, 1] },
      { key: 'S2', components: [2] },
    ];
    const byMembers = [{ key: 'S2' }, { key: 'S1' }, null, { key: 'S9' }];
    // Current segments {0,1,3} (any order) takes S2 back; {6} keeps its continuation S1; {4} takes S5
    // back; {2} matches S2 too, already taken, so it keeps its continuation by customers (S9).
    const result = withSegmentsShownBefore(byMembers, [[1, 0, 3], [6], [4], [2]], shown);
    expect(result.map((segment) => segment?.key ?? null)).toEqual(['S2', 'S1', 'S5', 'S9']);
    // A continuation by customers whose key an exact match takes back gives way.
    expect(withSegmentsShownBefore([{ key: 'S5' }, null], [[0, 4], [4]], shown).map((segment) => segment?.key ?? null)).toEqual([null, 'S5']);
    // Nothing shown before: the continuations by customers as they are.
    expect(withSegmentsShownBefore(byMembers, [[1], [6], [4], [2]], [])).toEqual(byMembers);
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
