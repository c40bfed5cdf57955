import { z } from 'zod';
import { named, pageLimit, pageOffset, probability, runId } from './fields.js';
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

/** Why a customer sits between their top two segments. */
export interface BorderlineWhy {
  /** Terms ranked by |contribution|. */
  terms: WhyTerm[];
  /** log(weight_top / weight_second): the prior part of the log-odds. */
  priorLogOdds: number;
  /** 'exact' per-feature terms for diag/spherical; 'shapley' (Shapley values over features, adding up to the log-odds) for full/tied. */
  method: 'exact' | 'shapley';
  /** Plain words, e.g. "basket size fits Tier 2, visit rate fits Tier 3". */
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
