import { z } from 'zod';
import { named, nonEmpty, pageLimit, pageOffset, runId } from './fields.js';
import type { ReviewDecision } from './review.js';

/** The Segments screen: profiles, the scatter sample, distributions, pages of memberships. */

export interface FeatureQuartiles {
  feature: string;
  unit: string;
  q1: number;
  median: number;
  q3: number;
}

export interface SegmentProfile {
  /** Index in the model (0-based), stable within a run. */
  segment: number;
  /** Key carried across months by matching ("S1", "S2" …), stable across runs. */
  key: string;
  name: string;
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
export const membershipFlags = ['borderline', 'atypical', 'partial', 'tooNew', 'review', 'decided'] as const;
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
  /** Model segment index and name; null for too-new customers. */
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
