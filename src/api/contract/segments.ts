import { z } from 'zod';
import { named, nonEmpty, pageLimit, pageOffset, runId } from './fields.js';
import type { ReviewDecision } from './review.js';
import type { RunSummary } from './runs.js';
import { MAX_COMPONENTS, type CovarianceType } from './settings.js';

/**
 * The Segments screen: profiles, the scatter sample, distributions, pages of memberships; and how
 * the model's Gaussian components are combined into the segments (the combining tree, the entropy
 * curve, and the analyst's changes to it: a level, a merge, a split).
 *
 * Components and segments (DESIGN.md §5): the information criterion chooses k Gaussian
 * *components*; they are combined into *segments*, each one or more components. A customer's
 * posterior for a segment is the sum of its components' posteriors; everything an analyst sees
 * per customer (segment, confidence, margin, flags, review, movement, names, exports) is per
 * segment. `segment` fields are segment indices (0-based, stable within a run until it is
 * regrouped); `component` fields are component indices of the run's model.
 */

export interface FeatureQuartiles {
  feature: string;
  unit: string;
  q1: number;
  median: number;
  q3: number;
}

/**
 * One measured trait of a segment, relative to all placed customers of the run: the segment's
 * median of a feature and where that median falls among every placed customer's value. Default
 * names are built from these (how much spent, how often, how much per trip, how recently, then the mix).
 */
export interface SegmentTrait {
  feature: string;
  /** Plain words for the feature ("visit rate"). */
  label: string;
  /** The segment's median, original units. */
  median: number;
  unit: string;
  /** Share (0–1) of all placed customers whose value is below the segment's median. */
  percentile: number;
  /** The words the name uses for it ("frequent", "large baskets", "long absent"; "on their usual rhythm" is shown but not said in a name). */
  words: string;
  /** True when the words are the continued segment's, kept because the percentile (for the rhythm, the median) is still near their band (src/runs/naming.ts). */
  kept?: boolean;
}

export interface SegmentProfile {
  /** Segment index (0-based), stable within a run until the run is regrouped. */
  segment: number;
  /** Key carried across months by matching ("S1", "S2" …), stable across runs. */
  key: string;
  name: string;
  /** The name built from the segment's traits, shown when the analyst has not renamed it. */
  defaultName: string;
  /** Whether `name` is the analyst's own (renames carry over to next month by key). */
  renamed: boolean;
  /** The traits the default name is built from, most distinctive first. */
  traits: SegmentTrait[];
  /** Position in spend order, 1 = highest spend. */
  spendRank: number;
  /** 'matched' carried from the parent, 'new' in a refit without a parent match, 'first' in a first run. */
  origin: 'first' | 'matched' | 'new';
  customers: number;
  share: number;
  /** Net spend in the window of the segment's members, EUR. */
  revenue: number;
  revenueShare: number;
  /** Feature medians and quartiles in original units (EUR, visits …), every feature the run stores that a member has. */
  profile: FeatureQuartiles[];
  /** The model components the segment is made of (component indices, ascending). */
  components: number[];
  /**
   * The segment as one distribution in the model's transformed space: the sum of its components'
   * mixture weights, and the mean and covariance (row-major d×d) of its components' mixture (equal
   * to the component's own for a one-component segment). Each component's own shape is in
   * `SegmentsResult.components`, for the ellipses.
   */
  weight: number;
  mean: number[];
  covariance: number[];
}

/** One Gaussian component of the run's model and the segment it belongs to (an ellipse on the scatter, in its segment's colour). */
export interface ComponentShape {
  component: number;
  /** Index of the segment holding it. */
  segment: number;
  /** Mixture weight, mean and covariance (row-major d×d) in the model's transformed space. */
  weight: number;
  mean: number[];
  covariance: number[];
}

export interface SegmentsResult {
  runId: number;
  /** Names of the model's features, in the order of `mean` and `covariance`. */
  features: string[];
  /** In spend order (highest first). */
  segments: SegmentProfile[];
  /** Every component of the model, in component order. */
  components: ComponentShape[];
}

/** How a run's segmentation was chosen: auto (where the entropy curve flattens), a number of segments the analyst picked, or merges and splits by hand. */
export const segmentationMethods = ['auto', 'level', 'hand'] as const;
export type SegmentationMethod = (typeof segmentationMethods)[number];

/** One level of the combining hierarchy (Baudry et al. 2010): the tree and the entropy curve. */
export interface CombiningLevelSummary {
  /** Segments at this level: K at the first level (the components themselves), one fewer per merge, 1 at the last. */
  segmentCount: number;
  /** Entropy of the level's segment posteriors, −Σᵢ Σ_s t_is log t_is (the curve's y). */
  entropy: number;
  /** Customers whose segment at the level above was one of the two merged into this level (0 at the first level). */
  mergedRows: number;
  /** Positions in the previous level's `groups` of the two groups merged into this level (first < second); null at the first level. */
  merged: [number, number] | null;
  /** Component indices of each group at this level, in the combining order (the merged group takes the first position). */
  groups: number[][];
}

/** `segmentation`: how the run's components are combined into its segments, with the whole hierarchy for the screens. */
export interface RunSegmentation {
  runId: number;
  /** Gaussian components of the model (K) and their covariance structure. */
  components: number;
  covariance: CovarianceType;
  method: SegmentationMethod;
  segmentCount: number;
  /** What auto gives: merged while the merged customers lose ≥ 0.2 nats each on average (where the normalised entropy curve flattens). */
  autoSegmentCount: number;
  /** The change point against the cumulative count of merged customers (the normalised curve), shown beside it. */
  autoSegmentCountByMergedRows: number;
  /** The segments now, in index order. */
  segments: { segment: number; key: string; name: string; components: number[]; customers: number }[];
  /** From K groups down to 1: levels[0] are the components, levels[K − 1] one segment. */
  levels: CombiningLevelSummary[];
  /** The segment count of the level whose grouping is the current one, or null after a merge or split no level has. */
  currentLevel: number | null;
}

/** A segment of a run: its index, or its key or name as text. */
export const segmentReference = z.union([z.number().int().min(0), nonEmpty]);

const componentIndex = z.number().int().min(0).max(MAX_COMPONENTS - 1);

/**
 * One change of a run's segmentation: a level of the hierarchy (a number of segments, or auto for
 * auto), merging two segments, or splitting one back into groups of its components.
 */
export const segmentationChange = z.union([
  z.strictObject({
    level: named(
      z.union([z.number().int().min(1).max(MAX_COMPONENTS), z.literal('auto')]),
      'number of segments (a level of the combining hierarchy), or auto',
    ),
  }),
  z.strictObject({ merge: named(z.tuple([segmentReference, segmentReference]), 'the two segments to merge (index, key or name)') }),
  z.strictObject({
    split: z.strictObject({
      segment: named(segmentReference, 'the segment to split (index, key or name)'),
      parts: named(z.array(z.array(componentIndex)).min(2), "groups of the segment's components, one per new segment"),
    }),
  }),
]);
export type SegmentationChange = z.output<typeof segmentationChange>;

export const regroupSegmentsInput = z.strictObject({
  runId: named(runId, 'the run', '--run'),
  change: named(segmentationChange, 'the change: {level: n|"auto"}, {merge: [a, b]} or {split: {segment, parts}}'),
});
export type RegroupSegmentsInput = z.output<typeof regroupSegmentsInput>;

/**
 * What a regroup did to the run (applied in place, in one transaction): the run's new summary,
 * the change in words, and how the segments' keys and names fared. Segments keep their key (and
 * the analyst's name) when they hold most of an old segment's customers, by the same matching
 * rule as a refit against last month (see README, "Matching across months").
 */
export interface RegroupResult {
  /** The run as `refresh --json` shows it, after the change. */
  summary: RunSummary;
  change: string;
  /** Keys present before and after. */
  keptKeys: string[];
  /** Segments (names as they were) that no longer exist. */
  retired: string[];
  /** Segments (new names) that are new. */
  added: string[];
  /** Segments back with the key (and the analyst's name) they had earlier in this run: the same components as then. */
  returned: string[];
  /** Later runs (children) whose movement against this run was recomputed. */
  laterRunsUpdated: number[];
}

export const segmentSampleInput = z.strictObject({
  runId: named(runId, 'the run', '--run'),
  /** At most this many customers, a seeded sample drawn by the core (the chart says so). */
  limit: named(z.number().int().min(1).max(20000).default(5000), 'customers in the sample'),
  seed: named(z.number().int().min(0).default(0), 'where in the stored random order the sample starts'),
});
/** A sample of placed customers for scatter plots and distributions. */
export interface SegmentSample {
  runId: number;
  totalCustomers: number;
  features: string[];
  /** Per customer: model segment, then values per feature in model space and in original units. */
  points: { customerId: string; segment: number; model: number[]; original: number[] }[];
}

export const featureDistributionInput = z.strictObject({
  runId: named(runId, 'the run', '--run'),
  feature: named(nonEmpty, 'the feature'),
  bins: named(z.number().int().min(2).max(200).default(40), 'bars of the histogram'),
});
/**
 * A histogram per segment of one feature (original units), computed in the core over a seeded
 * sample of at most 10,000 placed customers; bins span the 1st to 99th percentile.
 */
export interface FeatureDistribution {
  runId: number;
  feature: string;
  unit: string;
  edges: number[];
  counts: { segment: number; counts: number[] }[];
  /** Customers the histogram counts, and all placed customers of the run (say so when fewer). */
  customersUsed: number;
  totalCustomers: number;
}

export const membershipSortKeys = ['spend', 'revenue', 'confidence', 'margin', 'logDensity', 'customerId'] as const;
export type MembershipSortKey = (typeof membershipSortKeys)[number];
/** review: flagged for review (queued or counted beyond the capacity); queued: in the capacity-limited queue. */
export const membershipFlags = ['borderline', 'atypical', 'partial', 'tooNew', 'review', 'queued', 'decided'] as const;
export type MembershipFlag = (typeof membershipFlags)[number];

export const membershipsPageInput = z.strictObject({
  runId: named(runId, 'the run', '--run'),
  offset: pageOffset,
  limit: pageLimit,
  sortBy: named(z.enum(membershipSortKeys).default('spend'), 'the column to sort by'),
  descending: named(z.boolean().default(true), 'largest first'),
  /** Model segment index, or null for the too-new customers. */
  segment: named(z.number().int().min(0).nullable().optional(), 'the model segment (null: the too-new customers)'),
  flag: named(z.enum(membershipFlags).optional(), 'only customers with this flag'),
});
export type MembershipsQuery = z.output<typeof membershipsPageInput>;

export interface MembershipRow {
  customerId: string;
  /** Model segment index (after combining) and name; null for too-new customers. */
  segment: number | null;
  segmentName: string | null;
  /** Final segment (the review decision's where one exists). */
  finalSegment: number | null;
  finalSegmentName: string | null;
  confidence: number | null;
  margin: number | null;
  secondSegment: number | null;
  secondSegmentName: string | null;
  secondProbability: number | null;
  logDensity: number | null;
  borderline: boolean;
  atypical: boolean;
  partial: boolean;
  tooNew: boolean;
  /** Left out of campaigns by a review decision. */
  excluded: boolean;
  /** Flagged for review (borderline, atypical or a low-confidence mover), whether queued or counted beyond the capacity. */
  flagged: boolean;
  /** In the capacity-limited review queue. */
  queued: boolean;
  /** Net spend in the window, EUR. */
  revenue: number;
  /** Spend per month, EUR (null when the run's features do not include it). */
  spendPerMonth: number | null;
  decision: ReviewDecision | null;
}
export interface MembershipsPage {
  runId: number;
  total: number;
  offset: number;
  rows: MembershipRow[];
}
