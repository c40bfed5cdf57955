/**
 * Segment keys and default names (DESIGN.md §6). A key ("S1", "S2", …) identifies a segment
 * across months and regroups, so that its name — the analyst's rename included — carries over.
 *
 * Default names describe a segment's measured traits relative to ALL placed customers of the run,
 * in plain words: how much it spends (spend per month), how often (visit rate), how much per trip
 * (basket size), e.g. "High spend · frequent · large baskets". A trait's position is the share of
 * placed customers whose value lies below the segment's median, cut into five bands. How recently
 * is said against the customers' own rhythm (gaps since the last visit, see RHYTHM_BANDS), and only
 * where it sets the segment apart: "just been in", "overdue", "long absent". Days since the last
 * visit would mostly repeat the visit rate (a rare shopper's last visit is always weeks ago).
 * Spend leads because the lists are spend tiers: a campaign team sorts and reads them by it.
 * Names are unique within a run: segments whose words coincide get the next most distinctive trait
 * added (the one whose median lies furthest from the middle of all customers), then their spend rank.
 * Nothing here names a customer type from any known scheme; the words only restate measurements.
 */
import type { SegmentTrait } from '../api/contract.js';
import { featureLabel, featureUnit } from '../features/definitions.js';
import { countBelowSorted } from '../features/quantiles.js';

export interface NamedSegment {
  /** Segment index in this run. */
  index: number;
  key: string;
  /** What the analyst sees: their rename, or the default name. */
  name: string;
  /** The name built from the traits. */
  defaultName: string;
  renamed: boolean;
  /** 1 = highest mean spend. */
  spendRank: number;
  origin: 'first' | 'matched' | 'new';
}

/**
 * Spend rank of every segment: 1 for the highest mean spend. Segments without members (NaN
 * spend) come last, in index order, so ranks are always 1..k.
 */
export function spendRanks(meanSpend: readonly number[]): number[] {
  const order = meanSpend
    .map((spend, index) => ({ spend: Number.isNaN(spend) ? -Infinity : spend, index }))
    .sort((a, b) => b.spend - a.spend || a.index - b.index);
  const ranks = new Array<number>(meanSpend.length);
  order.forEach(({ index }, position) => (ranks[index] = position + 1));
  return ranks;
}

export function segmentKey(number: number): string {
  return `S${number}`;
}

/** The number inside a key ("S12" → 12); 0 for anything else. */
export function keyNumber(key: string): number {
  const match = /^S(\d+)$/.exec(key);
  return match ? Number(match[1]) : 0;
}

/** Words for five bands of a trait's position (share of customers below the segment's median), lowest band first. */
const bandWords: Record<string, readonly [string, string, string, string, string]> = {
  visits_per_month: ['rare', 'infrequent', 'regular', 'frequent', 'very frequent'],
  average_basket: ['very small baskets', 'small baskets', 'mid-size baskets', 'large baskets', 'very large baskets'],
  days_since_last_visit: ['very recent', 'recent', 'fairly recent', 'not recent', 'long ago'],
  fresh_share: ['very little fresh', 'little fresh', 'average fresh share', 'fresh-heavy', 'very fresh-heavy'],
  spend_per_month: ['very low spend', 'low spend', 'mid spend', 'high spend', 'very high spend'],
};

/** The features whose words make the name, in the order they are said: how much, how often, how much per trip, how recently. */
export const NAME_TRAITS: readonly string[] = ['spend_per_month', 'visits_per_month', 'average_basket', 'gaps_since_last_visit'];

/** The feature that says how recently against the customer's own rhythm (in usual gaps between visits). */
const RHYTHM_FEATURE = 'gaps_since_last_visit';

/**
 * Words for a segment's median gaps since the last visit, by the median itself rather than its rank:
 * the unit is already each customer's own usual gap, and a rank would call a group "overdue" merely
 * because others had lapsed less. A steady shopper's gaps are spread like an exponential of mean 1
 * (visits as a Poisson process, common practice; median ln 2 ≈ 0.69): a group whose median is
 * past 2 (one steady shopper in e² ≈ 7 gets that far) has mostly left its rhythm, past 4 (one in
 * e⁴ ≈ 55) it has mostly stopped coming; below 0.25 it was picked out by having just come in.
 */
const RHYTHM_BANDS: readonly { below: number; words: string }[] = [
  { below: 0.25, words: 'just been in' },
  { below: 2, words: 'on their usual rhythm' },
  { below: 4, words: 'overdue' },
  { below: Infinity, words: 'long absent' },
];

/** Keeping to one's rhythm sets no segment apart, so a name leaves it out. */
const UNSAID_IN_NAMES: ReadonlySet<string> = new Set(['on their usual rhythm']);

/**
 * A rhythm word is kept (the segment it continues had it) while the median stays within this
 * factor of its band's edges, as WORD_STICKINESS does for the banded traits.
 */
const RHYTHM_STICKINESS = 1.25;

/** The words for a median of gaps since the last visit (RHYTHM_BANDS). */
export function rhythmWords(medianGaps: number): string {
  return RHYTHM_BANDS.find((band) => medianGaps < band.below)!.words;
}

/** A trait's words: by its median for how recently against the rhythm, by its percentile for every other trait. */
function wordsFor(feature: string, median: number, percentile: number): string {
  return feature === RHYTHM_FEATURE ? rhythmWords(median) : traitWords(feature, percentile);
}

/** Whether a rhythm word may stay for this median: inside its band widened by RHYTHM_STICKINESS. */
function keepsRhythmWords(words: string, median: number): boolean {
  const b = RHYTHM_BANDS.findIndex((band) => band.words === words);
  if (b < 0) return false;
  const low = b === 0 ? -Infinity : RHYTHM_BANDS[b - 1].below / RHYTHM_STICKINESS;
  return median >= low && median < RHYTHM_BANDS[b].below * RHYTHM_STICKINESS;
}

function band(percentile: number): 0 | 1 | 2 | 3 | 4 {
  return percentile < 0.2 ? 0 : percentile < 0.4 ? 1 : percentile < 0.6 ? 2 : percentile < 0.8 ? 3 : 4;
}

/**
 * A median above this share of all customers is said as "top 1 %": the top band alone would give a
 * handful of business buyers and a household tier the same words.
 */
const TOP_PERCENT_FROM = 0.99;

/** What the top 1 % of a feature is called in a name. */
const topPercentNoun: Record<string, string> = {
  spend_per_month: 'spend',
  visits_per_month: 'visit rate',
  average_basket: 'baskets',
  days_since_last_visit: 'days away',
  fresh_share: 'fresh share',
};

/** The words for a trait: the feature's own five, or "very low … very high" and its label; "top 1 % …" above 99 % of customers. */
export function traitWords(feature: string, percentile: number): string {
  if (percentile >= TOP_PERCENT_FROM) return `top 1 % ${topPercentNoun[feature] ?? featureLabel(feature)}`;
  const words = bandWords[feature];
  if (words) return words[band(percentile)];
  const level = ['very low', 'low', 'mid', 'high', 'very high'][band(percentile)];
  return `${level} ${featureLabel(feature)}`;
}

/**
 * A trait keeps the word it had last time (the segment it continues) while its percentile stays
 * within this distance of that word's band: a segment whose median sits at a band edge does not
 * change name every month. Past the 99 % edge of "top 1 %" the margin is a tenth of it.
 */
export const WORD_STICKINESS = 0.05;

/** What a continuing segment's earlier trait needs to keep its word: the feature and the word. */
export type EarlierWords = Pick<SegmentTrait, 'feature' | 'words'>;

/** The band a trait's word stands for (0–4, 5 for "top 1 %"), or null for words these rules do not say. */
function bandOfWords(feature: string, words: string): number | null {
  for (let b = 0; b < 5; b++) if (traitWords(feature, 0.2 * b + 0.1) === words) return b;
  return traitWords(feature, 1) === words ? 5 : null;
}

/** The percentiles that may keep a band's word: the band widened by the stickiness margins. */
function stickyRange(b: number): [number, number] {
  if (b === 5) return [TOP_PERCENT_FROM - WORD_STICKINESS / 10, Infinity];
  const low = b === 0 ? -Infinity : 0.2 * b - WORD_STICKINESS;
  const high = b === 4 ? TOP_PERCENT_FROM + WORD_STICKINESS / 10 : 0.2 * (b + 1) + WORD_STICKINESS;
  return [low, high];
}

/**
 * A continuing segment's traits, with the earlier word kept (and marked `kept`) where the new
 * percentile is still within the earlier word's band widened by the stickiness margin. Words these
 * rules no longer say (an older version's) are not kept.
 */
export function withStickyWords(traits: readonly SegmentTrait[], earlier: readonly EarlierWords[] | undefined): SegmentTrait[] {
  // Stored traits come from the database: anything but a list of them keeps no word.
  const before = new Map((Array.isArray(earlier) ? earlier : []).map((trait) => [trait?.feature, trait]));
  return traits.map((trait) => {
    const old = before.get(trait.feature);
    if (!old || typeof old.words !== 'string' || old.words === trait.words) return trait;
    if (trait.feature === RHYTHM_FEATURE) return keepsRhythmWords(old.words, trait.median) ? { ...trait, words: old.words, kept: true } : trait;
    const b = bandOfWords(trait.feature, old.words);
    if (b === null) return trait;
    const [low, high] = stickyRange(b);
    return trait.percentile >= low && trait.percentile < high ? { ...trait, words: old.words, kept: true } : trait;
  });
}

/** Share of the sorted values strictly below x (NaN for an empty list). */
function shareBelow(sorted: Float64Array, x: number): number {
  return sorted.length === 0 ? NaN : countBelowSorted(sorted, x) / sorted.length;
}

/**
 * A segment's traits: for each feature the segment has a median of, that median and the share of
 * all placed customers below it. The name's traits come first (in the order said), then the rest
 * by how far their median lies from the middle of all customers.
 */
export function segmentTraits(
  medians: Readonly<Record<string, number | null>>,
  sortedByFeature: ReadonlyMap<string, Float64Array>,
  candidates: readonly string[],
): SegmentTrait[] {
  const traits: SegmentTrait[] = [];
  for (const feature of candidates) {
    const median = medians[feature];
    const sorted = sortedByFeature.get(feature);
    if (median === null || median === undefined || !Number.isFinite(median) || !sorted || sorted.length === 0) continue;
    const percentile = shareBelow(sorted, median);
    traits.push({ feature, label: featureLabel(feature), median, unit: featureUnit(feature), percentile, words: wordsFor(feature, median, percentile) });
  }
  const inName = (trait: SegmentTrait) => NAME_TRAITS.indexOf(trait.feature);
  return traits.sort((a, b) => {
    const [ia, ib] = [inName(a), inName(b)];
    if (ia >= 0 || ib >= 0) return (ia < 0 ? Infinity : ia) - (ib < 0 ? Infinity : ib);
    return Math.abs(b.percentile - 0.5) - Math.abs(a.percentile - 0.5);
  });
}

/** How many traits a name says before disambiguation: those of NAME_TRAITS the run stores, or the two most distinctive otherwise. */
function baseTraitCount(traits: readonly SegmentTrait[]): number {
  const named = traits.filter((trait) => NAME_TRAITS.includes(trait.feature)).length;
  return named > 0 ? named : Math.min(2, traits.length);
}

function joinWords(words: readonly string[]): string {
  const text = words.join(' · ');
  return text.charAt(0).toUpperCase() + text.slice(1);
}

/**
 * Default names for the segments of one run, unique within it: the base traits' words; where
 * names coincide, each of those segments adds its next trait until they differ, then its spend
 * rank. A segment with no trait is named by its spend rank alone.
 */
export function defaultNames(traitsBySegment: readonly SegmentTrait[][], ranks: readonly number[]): string[] {
  const used = traitsBySegment.map(baseTraitCount);
  const nameOf = (s: number) => {
    const words = traitsBySegment[s]
      .slice(0, used[s])
      .map((trait) => trait.words)
      .filter((words) => !UNSAID_IN_NAMES.has(words));
    return words.length > 0 ? joinWords(words) : `Spend rank ${ranks[s]}`;
  };
  const names = traitsBySegment.map((_, s) => nameOf(s));
  for (;;) {
    const clashes = clashingSegments(names);
    if (clashes.length === 0) return names;
    let grown = false;
    for (const s of clashes) {
      if (used[s] < traitsBySegment[s].length) {
        used[s]++;
        names[s] = nameOf(s);
        grown = true;
      }
    }
    if (!grown) {
      for (const s of clashes) names[s] = `${nameOf(s)} · spend rank ${ranks[s]}`;
      return names;
    }
  }
}

function clashingSegments(names: readonly string[]): number[] {
  const count = new Map<string, number>();
  for (const name of names) count.set(name, (count.get(name) ?? 0) + 1);
  return names.flatMap((name, s) => ((count.get(name) ?? 0) > 1 ? [s] : []));
}

/** A name not yet taken: the wanted one, or it with " (2)", " (3)", … appended. */
export function uniqueName(wanted: string, taken: ReadonlySet<string>): string {
  if (!taken.has(wanted)) return wanted;
  for (let attempt = 2; ; attempt++) {
    const candidate = `${wanted} (${attempt})`;
    if (!taken.has(candidate)) return candidate;
  }
}

/** A segment of the run before (last month's, or this run's before a regroup) that a new segment may continue. */
export interface EarlierSegment {
  key: string;
  name: string;
  renamed: boolean;
  /** Its traits' words (kept near a band edge: withStickyWords). */
  traits?: readonly EarlierWords[];
  /** The origin a segment continuing it takes ('matched' for last month's segments; its own for a regrouped run's). */
  origin: NamedSegment['origin'];
}

/**
 * Keys and names of this run's segments. `continues[s]` is the earlier segment segment s
 * continues (by the matching rule, ./carry-keys.ts), or null. A continuing segment keeps the
 * earlier key and origin, and the earlier name where the analyst had renamed it; every other
 * name is the default. New segments get fresh keys (`nextKeyNumber` onwards) in spend order and
 * `originOfNew` ('first' in a run without a parent, else 'new'). Renames win over defaults when
 * names clash; a clashing default, or a second segment carrying the same rename, gets a number.
 */
export function nameSegments(
  defaults: readonly string[],
  ranks: readonly number[],
  continues: readonly (EarlierSegment | null)[],
  nextKeyNumber: number,
  originOfNew: 'first' | 'new',
): NamedSegment[] {
  const segments = new Array<NamedSegment>(defaults.length);
  const renamedNames = new Set(continues.flatMap((earlier) => (earlier?.renamed ? [earlier.name] : [])));
  const taken = new Set<string>(renamedNames);
  // Two renames can meet (a segment a regroup brings back, renamed, beside one renamed the same since): the first in spend order keeps it.
  const renamesUsed = new Set<string>();
  const order = ranks.map((rank, index) => ({ rank, index })).sort((a, b) => a.rank - b.rank);
  let next = nextKeyNumber;
  for (const { rank, index } of order) {
    const earlier = continues[index];
    const renamed = earlier?.renamed === true;
    const name = renamed ? (renamesUsed.has(earlier!.name) ? uniqueName(earlier!.name, taken) : earlier!.name) : uniqueName(defaults[index], taken);
    if (renamed) renamesUsed.add(name);
    taken.add(name);
    segments[index] = {
      index,
      key: earlier ? earlier.key : segmentKey(next++),
      name,
      defaultName: defaults[index],
      renamed,
      spendRank: rank,
      origin: earlier ? earlier.origin : originOfNew,
    };
  }
  return segments;
}
