/**
 * Shapes of a segmentation run: what `runSegmentation` takes and returns, what the run tables hold,
 * and what the read functions in src/runs/read.ts give the app and the export. Keep them stable:
 * the API contract and the Excel writer code against them.
 *
 * Conventions: money in euros (numbers, two decimals of precision), shares in [0, 1], dates ISO
 * `YYYY-MM-DD`, segment `index` = the model's 0-based component index, `key` = a stable id that
 * carries a segment across months ("S1", "S2", …), `name` = what the analyst sees (renamable).
 */
import type { CovarianceType, FitProgress, SelectionCriterion, SweepRow } from '../model/index.js';
import type { FeatureTransform } from '../features/transforms.js';

export type RefreshMode = 'refit' | 'rescore';

/** Where the features come from: computed from receipts/visits, or the imported feature table. */
export type FeatureSource = 'receipts' | 'imported';

/** Everything a run is computed from; stored with the run so it can be reproduced from the seed. */
export interface RunSettings {
  /** Last day of the window (inclusive), `YYYY-MM-DD`. */
  asOf: string;
  /** Trailing window length in calendar months (default 12). */
  windowMonths: number;
  mode: RefreshMode;
  /** Parent run id; undefined → the latest run with an earlier as-of date; null → none (first run). */
  parentRunId?: number | null;
  /** Default 'receipts' when the database has receipts, else 'imported'. */
  source?: FeatureSource;
  /** Features given to the model (default spend_per_month, visits_per_month, average_basket). */
  features?: string[];
  /** Transform per model feature (default log1p + z-score for the three defaults; z-score otherwise). */
  transforms?: Record<string, FeatureTransform>;
  /** Fixed k, or 'auto' to sweep kMin..kMax (default 'auto'). */
  k: number | 'auto';
  kMin?: number;
  kMax?: number;
  /** Fixed structure, or 'auto' to sweep all four (default 'auto'). */
  covariance: CovarianceType | 'auto';
  criterion?: SelectionCriterion;
  restarts?: number;
  seed?: number;
  tol?: number;
  maxIterations?: number;
  regularization?: number;
  /** "Too new to place" thresholds (defaults 2 purchases, 2 months). */
  minPurchases?: number;
  minTenureMonths?: number;
  /** Borderline: confidence below (default 0.70) or margin below (default 0.20). */
  borderlineConfidence?: number;
  borderlineMargin?: number;
  /** Atypical: log density below this percentile of the run's customers (default 1). */
  atypicalPercentile?: number;
  /** Also queue customers whose segment changed since the parent with confidence below this (default off). */
  reviewMoversBelowConfidence?: number | null;
  /** Departments counted as fresh (default src/features/definitions.ts). */
  freshCategories?: string[];
}

/** RunSettings with every default filled in, as stored in the run row. */
export interface ResolvedRunSettings extends Required<Omit<RunSettings, 'parentRunId' | 'reviewMoversBelowConfidence'>> {
  parentRunId: number | null;
  reviewMoversBelowConfidence: number | null;
}

/** Progress of a run: its phase and, during fitting, the engine's own report. */
export interface RunProgress {
  phase: 'features' | 'transform' | 'fit' | 'score' | 'profiles' | 'movement' | 'store';
  /** Units done and total in this phase (0/0 when not countable). */
  done: number;
  total: number;
  message: string;
  fit?: FitProgress;
}

export interface RunOptions {
  signal?: AbortSignal;
  onProgress?: (progress: RunProgress) => void;
}

/** Exactly the `refresh --json` object of DESIGN.md §10. */
export interface RunSummary {
  runId: number;
  parentRunId: number | null;
  k: number;
  covariance: CovarianceType;
  bic: number;
  /** Customers placed in a segment (too-new customers excluded). */
  customers: number;
  tooNew: number;
  borderline: number;
  atypical: number;
  segments: { name: string; customers: number; share: number; revenueShare: number }[];
  /** Adjusted Rand index against the parent on common customers; null for a first run. */
  stability: number | null;
}

/** One row of the runs list: the summary's numbers without the segment table, plus when and how. */
export interface RunListItem extends Omit<RunSummary, 'segments'> {
  createdAt: string;
  asOf: string;
  windowMonths: number;
  mode: RefreshMode;
}

/** Median and quartiles of one feature over a segment's members, in original units. */
export interface FeatureQuartiles {
  q1: number;
  median: number;
  q3: number;
}

export interface SegmentProfile {
  index: number;
  key: string;
  name: string;
  /** 1 = highest mean spend per month. */
  spendRank: number;
  /** 'matched' carried from the parent, 'new' in a refit without a parent match, 'first' in a first run. */
  origin: 'first' | 'matched' | 'new';
  customers: number;
  share: number;
  /** Net spend in the window of the segment's members, EUR. */
  revenue: number;
  revenueShare: number;
  /** Every feature of the run's table (model features and the rest), original units; NaN-free (null when no member has a value). */
  features: Record<string, FeatureQuartiles | null>;
  /** The model component: weight, and mean/standard deviation per model feature in the transformed space. */
  weight: number;
  transformedMean: number[];
  transformedStdDev: number[];
}

export interface RunDetail {
  summary: RunSummary;
  settings: ResolvedRunSettings;
  createdAt: string;
  /** Model features in order, with their transforms as fitted (parameters included). */
  features: string[];
  transforms: Record<string, FeatureTransform>;
  /** Every feature stored per customer (model features first). */
  storedFeatures: string[];
  criterion: SelectionCriterion;
  logLikelihood: number;
  icl: number;
  warnings: string[];
  /** Segments of the parent that found no match in a refit. */
  retired: { key: string; name: string }[];
}

export type SweepTable = SweepRow[];

export type MembershipFlag = 'borderline' | 'atypical' | 'partial' | 'tooNew' | 'review' | 'decided';

export type MembershipSortField = 'customerId' | 'confidence' | 'margin' | 'logDensity' | 'revenue' | 'spend';

export interface MembershipQuery {
  offset?: number;
  /** Default 100, at most 10,000. */
  limit?: number;
  sort?: MembershipSortField;
  descending?: boolean;
  /** Model segment index, or null for too-new customers. */
  segment?: number | null;
  flag?: MembershipFlag;
}

export type ReviewAction = 'keep' | 'move' | 'exclude';

export interface ReviewDecision {
  action: ReviewAction;
  /** Segment the customer is placed in by the decision (keep: the model segment then; move: the target). */
  segmentKey: string | null;
  segmentName: string | null;
  note: string | null;
  reviewer: string | null;
  decidedAt: string;
  /** Run the decision was made in when it was carried over from an earlier month; null when made here. */
  carriedFromRunId: number | null;
}

export interface Membership {
  customerId: string;
  /** Model segment (index/name), null for too-new customers. */
  segment: number | null;
  segmentName: string | null;
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
  /** Net spend in the window, EUR. */
  revenue: number;
  /** Spend per month, EUR (NaN-free: null when the run's features do not include it). */
  spendPerMonth: number | null;
  /** Final segment: index in this run (null for too-new customers). */
  finalSegment: number | null;
  /** Final segment: the decision's where one exists, else the model's. */
  finalSegmentName: string | null;
  excluded: boolean;
  decision: ReviewDecision | null;
}

export interface Page<T> {
  total: number;
  offset: number;
  items: T[];
}

/** One feature's pull between the top two segments. */
export interface WhyTerm {
  feature: string;
  label: string;
  /** Contribution to log(p_top / p_second): positive pulls to the top segment, negative to the second. */
  contribution: number;
  /** Name of the segment this feature fits better. */
  fits: string;
}

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

export interface BorderlineItem extends Membership {
  why: BorderlineWhy;
}

export interface ReviewItem extends Membership {
  /** Why the customer is in the queue. */
  reasons: ('borderline' | 'atypical' | 'mover')[];
  why: BorderlineWhy | null;
  /** The customer's model features (original units) beside the medians of the top two segments. */
  featureComparison: { feature: string; label: string; value: number | null; topMedian: number | null; secondMedian: number | null }[];
  /** Last month (parent run): segment name and the decision made there, if any. */
  previousSegmentName: string | null;
  previousDecision: ReviewDecision | null;
}

export interface DriftWarning {
  segmentKey: string;
  segmentName: string;
  kind: 'mean-shift' | 'share-change';
  /** Feature for mean shifts; null for share changes. */
  feature: string | null;
  /** Shift in parent standard deviations, or share change in percentage points. */
  amount: number;
  message: string;
}

export interface Movement {
  parentRunId: number;
  /** Row and column labels: parent segments (rows) and current segments (columns). */
  parentSegments: { index: number; key: string; name: string }[];
  currentSegments: { index: number; key: string; name: string }[];
  /** counts[i][j]: customers in parent segment i and current segment j. */
  counts: number[][];
  common: number;
  /** Placed now, not placed in the parent (new customers, or no longer too new). */
  entered: number;
  /** Placed in the parent, not placed now (lapsed, or too new again). */
  left: number;
  /** Null when fewer than two customers are common to both runs. */
  adjustedRandIndex: number | null;
  warnings: DriftWarning[];
  /** Refit only: parent segments without a match and current segments new this month. */
  retired: { key: string; name: string }[];
  added: { key: string; name: string }[];
}

/** One customer as the export streams it. */
export interface ExportCustomerRow {
  customerId: string;
  finalSegmentName: string | null;
  modelSegmentName: string | null;
  confidence: number | null;
  secondSegmentName: string | null;
  secondProbability: number | null;
  borderline: boolean;
  atypical: boolean;
  tooNew: boolean;
  excluded: boolean;
  decision: ReviewAction | null;
  /** 1 yes, 0 no, null unknown (no customers row or empty). */
  marketingConsent: 0 | 1 | null;
  revenue: number;
  /** Stored features in original units, keyed by name (null where missing). */
  features: Record<string, number | null>;
}

export interface DecideInput {
  runId: number;
  customerId: string;
  action: ReviewAction;
  /** Required for 'move': the target segment of this run, by index, key or name. */
  segment?: number | string;
  note?: string;
  reviewer?: string;
}
