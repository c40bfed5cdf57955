/**
 * From component posteriors to the segments an analyst acts on, for a new run (src/runs/run.ts)
 * and for a stored run whose segmentation changes (src/runs/regroup.ts) alike: segment
 * memberships (./segment-memberships.ts), borderline flags, the segments' profiles, traits and
 * default names, which earlier segment each continues (keys and renames carried, ./carry-keys.ts),
 * movement against the parent, and the review queue at the run's capacity by what a decision is
 * worth (./review-rules.ts). Atypical flags come in: they rest on the mixture density, which
 * combining components does not change.
 */
import type { SegmentTrait } from '../api/contract.js';
import { InputError } from '../errors.js';
import { sortedFinite } from '../features/quantiles.js';
import type { Segmentation } from '../model/index.js';
import { continuations, withSegmentsShownBefore } from './carry-keys.js';
import { computeFlags, type Flags, type FlagThresholds } from './flags.js';
import { countMovement, movementAgainst, type StoredMovement } from './movement.js';
import { defaultNames, nameSegments, NAME_TRAITS, spendRanks, segmentTraits, withStickyWords, type EarlierSegment, type NamedSegment } from './naming.js';
import { previousKeyOf, type ParentRun } from './parent.js';
import { segmentProfiles, type ProfileNumbers } from './profiles.js';
import { isLowConfidenceMover, queueByValue, reviewMask, reviewUncertainty, reviewValue } from './review-rules.js';
import { segmentMemberships, type SegmentMemberships } from './segment-memberships.js';

/** The placed customers of a run, in the order of their component posteriors. */
export interface PlacedCustomers {
  customerIds: readonly string[];
  /** Net spend in the window, cents. */
  revenueCents: Float64Array;
  /** Stored features (original units): `columns[j][p]` is feature `features[j]` of placed customer p. */
  features: readonly string[];
  columns: readonly Float64Array[];
  /** n × K component posteriors. */
  posteriors: Float64Array;
  components: number;
  logDensity: Float64Array;
}

/** Segments a new segmentation may continue: last month's (refit), or the run's own before a regroup. */
export type EarlierSegments =
  /** The parent's own segmentation (rescore): segment s continues the parent's segment s. */
  | { kind: 'same'; segments: readonly (EarlierSegment & { index: number })[] }
  /**
   * Continuations by shared customers (refit, regroup); a regroup also passes the segments the run
   * showed before, which a segment of exactly the same components takes back (./carry-keys.ts).
   */
  | {
      kind: 'members';
      segments: readonly (EarlierSegment & { index: number })[];
      segmentOf: ReadonlyMap<string, number>;
      shownBefore?: readonly (EarlierSegment & { components: readonly number[] })[];
    }
  | null;

export interface SegmentingInput {
  placed: PlacedCustomers;
  /** Customers of the run not placed (too new): they count in movement as entered or left. */
  notPlaced: readonly string[];
  segmentation: Segmentation;
  /** Whether each segment must hold a customer (an analyst's explicit grouping or count; a regroup). */
  requireMembers: boolean;
  modelFeatures: readonly string[];
  thresholds: FlagThresholds;
  reviewMoversBelowConfidence: number | null;
  reviewCapacity: number;
  earlier: EarlierSegments;
  parent: ParentRun | null;
  nextKeyNumber: number;
}

export interface SegmentOutcome {
  memberships: SegmentMemberships;
  flags: Flags;
  /** Review reasons (bits), what a decision is worth, and whether the customer is in the capacity-limited queue. */
  review: Uint8Array;
  reviewValue: Float64Array;
  queued: Uint8Array;
  segments: (NamedSegment & { components: number[]; traits: SegmentTrait[] })[];
  profiles: ProfileNumbers[];
  movement: StoredMovement | null;
  /** Sorted values of each stored feature over the placed customers (for percentiles). */
  sortedByFeature: Map<string, Float64Array>;
}

/** Features whose traits a name may use: spend, how often, how much per trip, how recently, the mix, and the model's own. */
function traitCandidates(modelFeatures: readonly string[], stored: readonly string[]): string[] {
  const wanted = [...NAME_TRAITS, 'fresh_share', ...modelFeatures];
  return [...new Set(wanted)].filter((feature) => stored.includes(feature));
}

function meanSpendOf(placed: PlacedCustomers, labels: Int32Array, count: number): number[] {
  const j = placed.features.indexOf('spend_per_month');
  const spend = j >= 0 ? placed.columns[j] : placed.revenueCents;
  const sums = new Array<number>(count).fill(0);
  const counts = new Array<number>(count).fill(0);
  labels.forEach((s, p) => {
    if (Number.isNaN(spend[p])) return;
    sums[s] += spend[p];
    counts[s]++;
  });
  return sums.map((sum, s) => (counts[s] > 0 ? sum / counts[s] : NaN));
}

/** The segments a customer placement continues, keyed by the current segment index. */
function continuedSegments(earlier: EarlierSegments, placed: PlacedCustomers, labels: Int32Array, segmentation: Segmentation): (EarlierSegment | null)[] {
  const count = segmentation.segments.length;
  if (earlier === null) return new Array<EarlierSegment | null>(count).fill(null);
  if (earlier.kind === 'same') return Array.from({ length: count }, (_, s) => earlier.segments.find((segment) => segment.index === s) ?? null);
  const current = new Map<string, number>();
  placed.customerIds.forEach((customerId, p) => current.set(customerId, labels[p]));
  const { counts } = countMovement(earlier.segmentOf, current, earlier.segments.length, count);
  const byMembers = continuations(counts, count).map((index) => (index === null ? null : (earlier.segments.find((segment) => segment.index === index) ?? null)));
  return earlier.shownBefore ? withSegmentsShownBefore<EarlierSegment>(byMembers, segmentation.segments, earlier.shownBefore) : byMembers;
}

export function segmentPlaced(input: SegmentingInput): SegmentOutcome {
  const { placed, segmentation } = input;
  const n = placed.customerIds.length;
  const memberships = segmentMemberships(placed.posteriors, n, segmentation);
  const count = segmentation.segments.length;
  const labels = memberships.top;

  const profiles = segmentProfiles(placed.features, placed.columns, placed.revenueCents, labels, count);
  if (input.requireMembers) {
    const empty = profiles.findIndex((profile) => profile.customers === 0);
    if (empty >= 0) {
      throw new InputError(
        `Segment ${empty} (components ${segmentation.segments[empty].join(', ')}) would hold no customer: every customer's posterior is higher for another segment. ` +
          'Group its components with another segment, or choose fewer segments.',
      );
    }
  }

  const sortedByFeature = new Map(placed.features.map((feature, j) => [feature, sortedFinite(placed.columns[j])]));
  const candidates = traitCandidates(input.modelFeatures, placed.features);
  const continues = continuedSegments(input.earlier, placed, labels, segmentation);
  const traits = profiles.map((profile, s) =>
    withStickyWords(
      segmentTraits(Object.fromEntries(candidates.map((feature) => [feature, profile.features[feature]?.median ?? null])), sortedByFeature, candidates),
      continues[s]?.traits,
    ),
  );
  const ranks = spendRanks(meanSpendOf(placed, labels, count));
  const named = nameSegments(defaultNames(traits, ranks), ranks, continues, input.nextKeyNumber, input.parent ? 'new' : 'first');
  const segments = named.map((segment, s) => ({ ...segment, components: [...segmentation.segments[s]], traits: traits[s] }));

  const previousKeys = placed.customerIds.map((customerId) => previousKeyOf(input.parent, customerId));
  const flags = computeFlags(memberships.confidence, memberships.margin, placed.logDensity, input.thresholds);
  const review = new Uint8Array(n);
  const value = new Float64Array(n);
  for (let p = 0; p < n; p++) {
    const mover = isLowConfidenceMover(previousKeys[p], segments[labels[p]].key, memberships.confidence[p], input.reviewMoversBelowConfidence);
    review[p] = reviewMask(flags.borderline[p] === 1, flags.atypical[p] === 1, mover);
    if (review[p] > 0) {
      const uncertainty = reviewUncertainty(review[p], memberships.confidence[p], placed.logDensity[p], flags.atypicalLogDensityBelow);
      value[p] = reviewValue(placed.revenueCents[p] / 100, uncertainty);
    }
  }
  const queued = queueByValue(review, value, placed.customerIds, input.reviewCapacity);

  let movement: StoredMovement | null = null;
  if (input.parent) {
    const segmentOf = new Map<string, number>();
    for (const customerId of input.notPlaced) segmentOf.set(customerId, -1);
    placed.customerIds.forEach((customerId, p) => segmentOf.set(customerId, labels[p]));
    movement = movementAgainst(input.parent, {
      segmentOf,
      segments,
      shares: profiles.map((profile) => profile.share),
      features: placed.features,
      columns: placed.columns,
      labels,
    });
  }
  return { memberships, flags, review, reviewValue: value, queued, segments, profiles, movement, sortedByFeature };
}
