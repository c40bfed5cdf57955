import { z } from 'zod';
import { named, pageLimit, pageOffset, probability, runId } from './fields.js';
import type { QueueCounts } from './review.js';
import type { MembershipRow } from './segments.js';

/** The Certainty screen: confidence histogram, live threshold counts, borderline table. */

export const certaintyInput = z.strictObject({
  runId: named(runId, 'the run', '--run'),
  borderlineConfidence: named(probability, 'borderline below this confidence', '--borderline-confidence'),
  borderlineMargin: named(probability, 'borderline below this margin', '--borderline-margin'),
  atypicalPercentile: named(z.number().min(0).max(50), 'atypical below this percentile of log density', '--atypical-percentile'),
  bins: named(z.number().int().min(2).max(100).default(20), 'bars of the confidence histogram'),
});
export type CertaintyQuery = z.output<typeof certaintyInput>;
export interface CertaintySummary {
  runId: number;
  customers: number;
  /** Customers whose confidence falls in each bin of [0, 1]. */
  confidenceHistogram: { from: number; to: number; customers: number }[];
  /** Counts under the given thresholds (the sliders), not the stored ones. */
  borderline: number;
  atypical: number;
  /** The log-density cut that the percentile gives. */
  atypicalLogDensityBelow: number;
  /** The run's stored review queue (at its own thresholds and capacity): how many were left out and why. */
  queue: QueueCounts;
}

export const borderlineInput = z.strictObject({
  runId: named(runId, 'the run', '--run'),
  offset: pageOffset,
  limit: pageLimit,
  /** Thresholds to list by (the Certainty sliders); absent = the run's own. */
  borderlineConfidence: named(probability.optional(), 'borderline below this confidence (absent: the run\'s own)', '--borderline-confidence'),
  borderlineMargin: named(probability.optional(), 'borderline below this margin (absent: the run\'s own)', '--borderline-margin'),
});
export type BorderlineQuery = z.output<typeof borderlineInput>;

/** One feature's pull between the top two segments. */
export interface WhyTerm {
  feature: string;
  label: string;
  /** Contribution to log(p_top / p_second): positive pulls to the top segment, negative to the second. */
  contribution: number;
  /** Name of the segment this feature fits better. */
  fits: string;
}

/**
 * Why a customer sits between their top two segments. Each segment is a mixture of its
 * components, so the log-odds is log p_top(x) − log p_second(x) with p_s(x) = Σ_{c in s} w_c N_c(x);
 * the terms split its likelihood part over the features.
 */
export interface BorderlineWhy {
  /** Terms ranked by |contribution|. */
  terms: WhyTerm[];
  /** log(weight_top / weight_second), the segments' summed weights: the prior part of the log-odds. */
  priorLogOdds: number;
  /**
   * 'exact' per-feature terms when both segments are one component of a diagonal structure;
   * 'shapley' (Shapley values over features of the marginal mixture densities, adding up to the
   * log-odds) otherwise.
   */
  method: 'exact' | 'shapley';
  /** Plain words, e.g. "basket size fits Frequent · small baskets, visit rate fits Regular · large baskets". */
  text: string;
}

/** One feature of an atypical customer: their value against every placed customer of the run. */
export interface AtypicalTerm {
  feature: string;
  label: string;
  unit: string;
  /** The customer's value, original units. */
  value: number;
  /** above: the share of placed customers with a lower value; below: the share with a higher one. */
  direction: 'above' | 'below';
  share: number;
  /** Beyond the 2.5 % tails: extreme on its own. */
  extreme: boolean;
}

/**
 * Why an atypical customer fits no segment well: the features that are extreme, in original units
 * and percentiles (e.g. "spend per month EUR 10,918, above 99.9 % of customers"); when none is
 * extreme alone, the combination that is rare.
 */
export interface AtypicalWhy {
  /** Most extreme first. */
  terms: AtypicalTerm[];
  text: string;
}
export interface BorderlineRow extends MembershipRow {
  why: BorderlineWhy;
}
export interface BorderlinePage {
  runId: number;
  total: number;
  offset: number;
  rows: BorderlineRow[];
}
