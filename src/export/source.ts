/**
 * What an export is written from. The writers never touch the database: they read an
 * `ExportSource`, so they can be tested on in-memory sources and fed from a stored run by
 * src/export/run-source.ts. Money is in euros, shares and probabilities in [0, 1], dates ISO.
 */
import type { ReviewAction } from '../api/contract.js';
import type { ExportCustomerRow } from '../runs/types.js';

export type { ExportCustomerRow } from '../runs/types.js';

/**
 * How a value is shown: decides the number format of its column. `number` is a setting shown as
 * it is (0.001, 1E-06: Excel's General format).
 */
export type ValueKind = 'eur' | 'share' | 'probability' | 'count' | 'decimal' | 'number' | 'text' | 'date' | 'datetime';

/** A feature column in original units (customer sheets) or a median column (overview). */
export interface FeatureColumn {
  /** Name of the feature as stored with the run (`spend_per_month`). */
  key: string;
  /** Column heading, unit included (`Spend per month (EUR)`). */
  header: string;
  kind: ValueKind;
}

/** One line of the overview's run block: a label and its value. */
export interface OverviewEntry {
  label: string;
  value: string | number | Date | null;
  kind?: ValueKind;
}

export interface ExportRunHeader {
  /** The chain's name where the database records one; null otherwise. */
  chain: string | null;
  /** The database file the run is stored in (base name), null for in-memory sources. */
  database: string | null;
  runId: number;
  parentRunId: number | null;
  createdAt: string;
  /** Last day of the window, `YYYY-MM-DD`. */
  asOf: string;
  windowMonths: number;
  /** First day of the window, `YYYY-MM-DD`. */
  windowStart: string;
  /** Model features with their transforms in words (`log1p, z-score`). */
  features: { name: string; label: string; transform: string }[];
  /** Model and settings lines (k, covariance, criterion, BIC, seed, thresholds, …). */
  model: OverviewEntry[];
  /** Run-wide counts (all customers, whatever their consent). */
  counts: { placed: number; tooNew: number; borderline: number; atypical: number };
  warnings: string[];
}

export interface ExportSegment {
  name: string;
  customers: number;
  share: number;
  revenue: number;
  revenueShare: number;
  /** Median per `ExportSource.medianColumns` key; null when no member has a value. */
  medians: Record<string, number | null>;
}

/** One customer of the review queue. */
export interface ExportReviewRow {
  customerId: string;
  reasons: string[];
  /** Net spend in the window, EUR: what is at stake. */
  revenue: number;
  topSegmentName: string | null;
  topProbability: number | null;
  secondSegmentName: string | null;
  secondProbability: number | null;
  decision: ReviewAction | null;
  /** Segment the decision placed the customer in (keep: the model's; move: the target). */
  decidedSegmentName: string | null;
  note: string | null;
  reviewer: string | null;
  /** ISO date-time of the decision, null while open. */
  decidedAt: string | null;
  /** 1 yes, 0 no, null unknown: only consenting customers are listed. */
  marketingConsent: 0 | 1 | null;
}

export interface ExportMovement {
  parentRunId: number;
  parentSegments: string[];
  currentSegments: string[];
  /** counts[i][j]: customers in parent segment i and current segment j. */
  counts: number[][];
  entered: number;
  left: number;
  common: number;
  /** Null when it is undefined (e.g. a single segment on both sides). */
  adjustedRandIndex: number | null;
}

/** Rows may come from a database cursor (sync) or a generator that awaits (async). */
export type RowStream<T> = Iterable<T> | AsyncIterable<T>;

export interface ExportSource {
  header: ExportRunHeader;
  /** Segments in spend order; their names are the valid `segments` of a campaign list. */
  segments: ExportSegment[];
  /** Median columns of the overview's segment table. */
  medianColumns: FeatureColumn[];
  /** Feature columns of the customer sheets, original units. */
  customerFeatureColumns: FeatureColumn[];
  /**
   * Every customer of the run (placed and too new), whatever the consent. Called more than once
   * (a counting pass for the overview, then the writing pass), each call a fresh pass.
   */
  customers: () => RowStream<ExportCustomerRow>;
  /** The review queue ordered by spend at stake, whatever the consent. */
  reviewRows: () => RowStream<ExportReviewRow>;
  movement: ExportMovement | null;
}
