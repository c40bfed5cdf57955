/**
 * Segment keys and names. Segments are named in spend order ("Tier 1 — highest spend", …,
 * "Tier k — lowest spend"); a key ("S1", "S2", …) identifies a segment across months so that a
 * refit can carry its name (including the analyst's renames) over to the matched new segment.
 */

export interface NamedSegment {
  /** Model component index in this run. */
  index: number;
  key: string;
  name: string;
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

export function defaultTierName(rank: number, k: number): string {
  if (k === 1) return 'Tier 1 — all customers';
  if (rank === 1) return 'Tier 1 — highest spend';
  if (rank === k) return `Tier ${k} — lowest spend`;
  return `Tier ${rank}`;
}

export function segmentKey(number: number): string {
  return `S${number}`;
}

/** The number inside a key ("S12" → 12); 0 for anything else. */
export function keyNumber(key: string): number {
  const match = /^S(\d+)$/.exec(key);
  return match ? Number(match[1]) : 0;
}

/** A first run: keys S1..Sk and names both in spend order. */
export function nameFirstRun(meanSpend: readonly number[]): NamedSegment[] {
  const ranks = spendRanks(meanSpend);
  const k = meanSpend.length;
  return ranks.map((rank, index) => ({ index, key: segmentKey(rank), name: defaultTierName(rank, k), spendRank: rank, origin: 'first' }));
}

/** A name not yet taken: the wanted one, or it with " (new)", " (new 2)", … appended. */
export function uniqueName(wanted: string, taken: ReadonlySet<string>): string {
  if (!taken.has(wanted)) return wanted;
  for (let attempt = 1; ; attempt++) {
    const candidate = attempt === 1 ? `${wanted} (new)` : `${wanted} (new ${attempt})`;
    if (!taken.has(candidate)) return candidate;
  }
}

/**
 * A refit: matched segments take their parent's key and name; unmatched new segments get fresh
 * keys (numbers above every key used so far, `nextKeyNumber` onwards) and their tier name by
 * spend rank, made unique against the carried names. Returns the segments and the retired ones.
 */
export function carryNames(
  parentSegments: readonly { index: number; key: string; name: string }[],
  pairs: readonly { parent: number; child: number }[],
  childMeanSpend: readonly number[],
  nextKeyNumber: number,
): { segments: NamedSegment[]; retired: { key: string; name: string }[] } {
  const ranks = spendRanks(childMeanSpend);
  const k = childMeanSpend.length;
  const parentByIndex = new Map(parentSegments.map((segment) => [segment.index, segment]));
  const segments = new Array<NamedSegment>(k);
  const matchedParents = new Set<number>();
  for (const { parent, child } of pairs) {
    const source = parentByIndex.get(parent);
    if (!source) continue;
    matchedParents.add(parent);
    segments[child] = { index: child, key: source.key, name: source.name, spendRank: ranks[child], origin: 'matched' };
  }
  const taken = new Set(segments.filter(Boolean).map((segment) => segment.name));
  let next = nextKeyNumber;
  // New segments in spend order so their keys read in the same order as their tiers.
  const unmatched = ranks.map((rank, index) => ({ rank, index })).filter(({ index }) => !segments[index]).sort((a, b) => a.rank - b.rank);
  for (const { rank, index } of unmatched) {
    const name = uniqueName(defaultTierName(rank, k), taken);
    taken.add(name);
    segments[index] = { index, key: segmentKey(next++), name, spendRank: rank, origin: 'new' };
  }
  const retired = parentSegments.filter((segment) => !matchedParents.has(segment.index)).map(({ key, name }) => ({ key, name }));
  return { segments, retired };
}
