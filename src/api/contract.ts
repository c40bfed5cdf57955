import { z } from 'zod';

/**
 * The one typed contract between the screens and the core (DESIGN.md §2).
 *
 * Every UI action is one method: a zod schema validates its input at the boundary (IPC, HTTP,
 * CLI) and a TypeScript type describes its output. Outputs are plain JSON (no typed arrays, no
 * Dates) because they cross IPC and HTTP unchanged.
 *
 * Long work (import, run, export, demo) returns `{ taskId }` at once; the work then streams
 * `TaskEvent`s — progress `{taskId, phase, done, total, message}` and finally one `done` (with the
 * method's result), `failed` (with an `ApiError`) or `cancelled` event. `cancelTask` stops it.
 *
 * This file must stay free of Node modules: the renderer imports its types (type-only).
 */

// ---------------------------------------------------------------------------------------------
// Shared pieces

const nonEmpty = (what: string) => z.string().trim().min(1, `${what} must not be empty`);
const runId = z.number().int().positive();
const isoDate = z.string().regex(/^\d{4}-\d{2}-\d{2}$/, 'must be a date written YYYY-MM-DD');
const pageOffset = z.number().int().min(0).default(0);
const pageLimit = z.number().int().min(1).max(1000).default(100);
const probability = z.number().min(0).max(1);

export const importKinds = ['receipts', 'visits', 'customers', 'features'] as const;
export type ImportKind = (typeof importKinds)[number];

export const covarianceTypes = ['full', 'diag', 'spherical', 'tied'] as const;
export type CovarianceType = (typeof covarianceTypes)[number];

/** How one model feature is transformed before the fit: log1p, then clipping, then z-score. */
export interface FeatureTransformSpec {
  feature: string;
  log1p: boolean;
  /** Clip below/above these percentiles (0–100); null = no clipping on that side. */
  clipLowerPercentile: number | null;
  clipUpperPercentile: number | null;
  zScore: boolean;
}

export const reviewActions = ['keep', 'move', 'exclude'] as const;
export type ReviewAction = (typeof reviewActions)[number];

/**
 * A column mapping as the screens hold it: for each field, the file's column that supplies it
 * (field → column; one choice per field). The handlers turn it into the importer's column → field
 * form (`--map col=field`) and back.
 */
const columnMapping = z.record(z.string(), z.string());
export type ColumnMapping = Record<string, string>;

/**
 * Dates an import accepts unless told otherwise: from 1990-01-01 (before any loyalty-card history
 * an analyst loads; our choice) to a year after the day of the import (a till clock set wrong by
 * months still imports; a year like 9999 does not). Dates outside are rejected rows in the report.
 */
export const PLAUSIBLE_DATES_FROM = '1990-01-01';
export const PLAUSIBLE_DAYS_AHEAD = 366;
export function defaultPlausibleDates(today: Date = new Date()): { from: string; to: string } {
  return { from: PLAUSIBLE_DATES_FROM, to: new Date(today.getTime() + PLAUSIBLE_DAYS_AHEAD * 86_400_000).toISOString().slice(0, 10) };
}

export const importEncodings = ['utf-8', 'windows-1252'] as const;

/** How dates, amounts and text in a file are written; `iso`, `.` and UTF-8 unless the analyst says otherwise. */
const readOptions = {
  sheet: z.string().min(1).optional(),
  dateOrder: z.enum(['iso', 'day-first', 'month-first']).default('iso'),
  decimalSeparator: z.enum(['.', ',']).default('.'),
  /** CSV text encoding: UTF-8 (a UTF-16 byte-order mark is honoured); a file that is not UTF-8 is refused, naming this choice. */
  encoding: z.enum(importEncodings).default('utf-8'),
  /** Dates outside this range are rejected rows, listed in the import report. */
  plausibleDates: z
    .strictObject({ from: isoDate, to: isoDate })
    .refine((range) => range.from <= range.to, 'from must not be after to')
    .default(() => defaultPlausibleDates()),
};

/** Returned at once by every long task; its events carry the same id. */
export interface TaskStarted<M extends LongTaskMethod = LongTaskMethod> {
  taskId: string;
  method: M;
}

/** Long tasks run one at a time per database (one writer): later ones wait as `queued`. */
export type TaskState = 'queued' | 'running' | 'done' | 'failed' | 'cancelled';

export interface TaskProgress {
  taskId: string;
  /** What the task is doing now, e.g. "reading", "fitting k=3 full", "writing customers". */
  phase: string;
  done: number;
  /** Total units of the phase, or null when not known in advance. */
  total: number | null;
  message: string;
}

export interface ApiError {
  /** input: the caller must change something; cancelled: stopped on request; internal: a bug or I/O failure. */
  kind: 'input' | 'cancelled' | 'internal';
  message: string;
  /** Zod issues for malformed input: the field path (dots) and what is wrong with it. */
  issues?: { path: string; message: string }[];
  details?: Record<string, unknown>;
}

export type TaskEvent =
  | ({ type: 'progress' } & TaskProgress)
  | { type: 'done'; taskId: string; method: LongTaskMethod; result: unknown }
  | { type: 'failed'; taskId: string; method: LongTaskMethod; error: ApiError }
  | { type: 'cancelled'; taskId: string; method: LongTaskMethod };

export interface TaskStatus {
  taskId: string;
  method: LongTaskMethod;
  state: TaskState;
  startedAt: string;
  finishedAt: string | null;
  progress: TaskProgress | null;
  /** The method's result once `state` is done (see `TaskResults`). */
  result: unknown;
  error: ApiError | null;
}

// ---------------------------------------------------------------------------------------------
// Database

export const openDatabaseInput = z.strictObject({ path: nonEmpty('path') });
export const databaseInfoInput = z.strictObject({});

export interface DatabaseInfo {
  path: string;
  schemaVersion: number;
  customers: number;
  receipts: number;
  visits: number;
  imports: number;
  runs: number;
  /** First and last day with receipts or visits (YYYY-MM-DD), null when there are none yet. */
  firstDataDate: string | null;
  lastDataDate: string | null;
}

export const appInfoInput = z.strictObject({});
export interface AppInfo {
  version: string;
  /** 'electron' or 'browser': which shell hosts the screens (for wording only, never for logic). */
  shell: 'electron' | 'browser' | 'cli';
  databasePath: string | null;
  recentDatabases: string[];
  /** The cautions of DESIGN.md §14, one paragraph per entry, shown on the Export screen. */
  cautions: string[];
}

// ---------------------------------------------------------------------------------------------
// Sources: preview, import, history, saved mappings, rejection report

export const previewFileInput = z.strictObject({
  path: nonEmpty('path'),
  kind: z.enum(importKinds),
  /** Mapping to preview with; without it the saved mapping, then automatic names, are used. */
  mapping: columnMapping.optional(),
  rows: z.number().int().min(1).max(200).default(20),
  ...readOptions,
});

export interface FieldInfo {
  field: string;
  required: boolean;
  description: string;
}

export interface FilePreview {
  path: string;
  kind: ImportKind;
  /** Column names as found in the file. */
  columns: string[];
  /** Sheets of an XLSX workbook (empty for CSV). */
  sheets: string[];
  delimiter: string | null;
  encoding: string;
  /** The fields this kind knows, and which are required. */
  fields: FieldInfo[];
  /** The mapping the preview used (given, saved, or automatic by name). */
  mapping: ColumnMapping;
  mappingSource: 'given' | 'saved' | 'automatic';
  /** Required fields the mapping leaves without a column. */
  missingFields: string[];
  /** The first rows as they would be read: raw cells by column, then the parsed value or the reason it fails. */
  rows: {
    line: number;
    cells: Record<string, string>;
    parsed: Record<string, string | number | null> | null;
    problem: string | null;
  }[];
}

export const importFileInput = z.strictObject({
  path: nonEmpty('path'),
  kind: z.enum(importKinds),
  mapping: columnMapping.optional(),
  /** Share of rejected rows above which the whole file is refused (DESIGN.md §3: 5%). */
  rejectionThreshold: probability.default(0.05),
  ...readOptions,
});

/** Exactly the `import --json` object of DESIGN.md §10, plus the import's id. */
export interface ImportResult {
  importId: number | null;
  file: string;
  kind: ImportKind;
  rowsRead: number;
  rowsImported: number;
  rowsRejected: number;
  duplicatesSkipped: number;
  alreadyImported: boolean;
  /** Sum of imported receipt amounts in EUR; null for other kinds. */
  amountTotal: number | null;
  /** Path of the rejection report (CSV next to the database), null when nothing was rejected. */
  report: string | null;
}

export const listImportsInput = z.strictObject({});
export interface ImportRecord {
  importId: number;
  fileName: string;
  kind: ImportKind;
  rowsRead: number;
  rowsImported: number;
  rowsRejected: number;
  duplicatesSkipped: number;
  amountTotal: number | null;
  reportPath: string | null;
  importedAt: string;
  mapping: ColumnMapping;
}

export const importReportInput = z.strictObject({
  importId: z.number().int().positive(),
  offset: pageOffset,
  limit: pageLimit,
});
export interface ImportReportPage {
  importId: number;
  total: number;
  rows: { line: number; column: string; value: string; reason: string }[];
}

export const savedMappingInput = z.strictObject({ kind: z.enum(importKinds) });
export interface SavedMapping {
  kind: ImportKind;
  /** The mapping last used for this kind, offered again next month; null before the first import. */
  mapping: ColumnMapping | null;
}

// ---------------------------------------------------------------------------------------------
// Model: options, start a run, list runs

export const modelOptionsInput = z.strictObject({});
export interface FeatureOption {
  name: string;
  label: string;
  /** 'EUR', 'visits', 'days', 'months', 'share' … for formatting. */
  unit: string;
  /** What the number means, for tooltips. */
  meaning: string;
  inDefaultSet: boolean;
  /** The transform used when the analyst picks this feature without choosing one. */
  defaultTransform: FeatureTransformSpec;
}
export interface ModelOptions {
  features: FeatureOption[];
  covarianceTypes: CovarianceType[];
  defaults: RunSettings;
}

const percentile = z.number().min(0).max(100);
const transformSpec = z.strictObject({
  feature: nonEmpty('feature'),
  log1p: z.boolean().default(false),
  clipLowerPercentile: percentile.nullable().default(null),
  clipUpperPercentile: percentile.nullable().default(null),
  zScore: z.boolean().default(true),
});

export const startRunInput = z
  .strictObject({
    asOf: isoDate,
    windowMonths: z.number().int().min(1).max(60).default(12),
    mode: z.enum(['refit', 'rescore']).default('refit'),
    /** Parent run; absent = the latest run with an earlier as-of date; null = none (start afresh). */
    parentRunId: runId.nullable().optional(),
    /** Features with their transforms; absent = the defaults of DESIGN.md §4. */
    features: z.array(transformSpec).min(1).optional(),
    /** A fixed k, or 'auto' to sweep kMin..kMax. */
    k: z.union([z.number().int().min(1).max(20), z.literal('auto')]).default('auto'),
    kMin: z.number().int().min(1).max(20).default(2),
    kMax: z.number().int().min(1).max(20).default(8),
    /** One structure, or 'auto' to sweep all four. */
    covariance: z.union([z.enum(covarianceTypes), z.literal('auto')]).default('auto'),
    criterion: z.enum(['bic', 'icl']).default('bic'),
    restarts: z.number().int().min(1).max(50).default(5),
    seed: z.number().int().min(0).max(2 ** 31 - 1).default(0),
    borderlineConfidence: probability.default(0.7),
    borderlineMargin: probability.default(0.2),
    /** Log-density percentile under which a customer is atypical (DESIGN.md §5: 1). */
    atypicalPercentile: z.number().min(0).max(50).default(1),
    minPurchases: z.number().int().min(0).default(2),
    minTenureMonths: z.number().int().min(0).default(2),
  })
  .refine((value) => value.kMin <= value.kMax, { message: 'kMin must not exceed kMax', path: ['kMin'] });
export type RunSettings = z.output<typeof startRunInput>;

/** Exactly the `refresh --json` object of DESIGN.md §10. */
export interface RunSummary {
  runId: number;
  parentRunId: number | null;
  k: number;
  covariance: CovarianceType;
  bic: number;
  customers: number;
  tooNew: number;
  borderline: number;
  atypical: number;
  segments: { name: string; customers: number; share: number; revenueShare: number }[];
  /** Adjusted Rand index against the parent on common customers; null for a first run. */
  stability: number | null;
}

export const listRunsInput = z.strictObject({});
export interface RunListItem {
  runId: number;
  parentRunId: number | null;
  asOf: string;
  mode: 'refit' | 'rescore';
  k: number;
  covariance: CovarianceType;
  customers: number;
  createdAt: string;
}

export const runInput = z.strictObject({ runId });

export interface RunDetail extends RunSummary {
  asOf: string;
  windowMonths: number;
  mode: 'refit' | 'rescore';
  createdAt: string;
  settings: RunSettings;
  /** Features in model order with their stored transforms. */
  features: FeatureTransformSpec[];
  /** Every feature stored per customer (model features first). */
  storedFeatures: string[];
  logLikelihood: number;
  icl: number;
  criterion: 'bic' | 'icl';
  /** Parent segments that found no match in a refit. */
  retiredSegments: string[];
  warnings: string[];
}

// ---------------------------------------------------------------------------------------------
// Segments, sweep, memberships

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
  /** Key carried across months by matching, stable across runs. */
  key: string;
  name: string;
  /** Position in spend order, 1 = highest spend. */
  spendRank: number;
  customers: number;
  share: number;
  revenue: number;
  revenueShare: number;
  /** Feature medians and quartiles in original units (EUR, visits …). */
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
  segments: SegmentProfile[];
}

export interface SweepRow {
  k: number;
  covariance: CovarianceType;
  logLikelihood: number;
  bic: number;
  aic: number;
  icl: number;
  parameterCount: number;
  converged: boolean;
  iterations: number;
  /** Warnings of that fit (e.g. a covariance that needed regularisation). */
  warnings: string[];
  /** The model the run kept. */
  chosen: boolean;
}

export const segmentSampleInput = z.strictObject({
  runId,
  /** At most this many customers, a seeded sample drawn by the core (the chart says so). */
  limit: z.number().int().min(1).max(20000).default(5000),
  seed: z.number().int().min(0).default(0),
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
  runId,
  feature: nonEmpty('feature'),
  bins: z.number().int().min(2).max(200).default(40),
});
/**
 * A histogram per segment of one feature (original units), computed in the core over a seeded
 * sample of at most 20,000 placed customers; bins span the 1st to 99th percentile.
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
export const membershipsPageInput = z.strictObject({
  runId,
  offset: pageOffset,
  limit: pageLimit,
  sortBy: z.enum(membershipSortKeys).default('spend'),
  descending: z.boolean().default(true),
  /** Model segment index, or null for the too-new customers. */
  segment: z.number().int().min(0).nullable().optional(),
  flag: z.enum(['borderline', 'atypical', 'partial', 'tooNew', 'review', 'decided']).optional(),
});
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
  excluded: boolean;
  /** Net spend in the window, EUR. */
  revenue: number;
  spendPerMonth: number | null;
  decision: ReviewDecision | null;
}
export interface MembershipsPage {
  runId: number;
  total: number;
  offset: number;
  rows: MembershipRow[];
}

// ---------------------------------------------------------------------------------------------
// Certainty: confidence histogram, live threshold counts, borderline table

export const certaintyInput = z.strictObject({
  runId,
  borderlineConfidence: probability,
  borderlineMargin: probability,
  atypicalPercentile: z.number().min(0).max(50),
  bins: z.number().int().min(2).max(100).default(20),
});
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
  runId,
  offset: pageOffset,
  limit: pageLimit,
  /** Thresholds to list by (the Certainty sliders); absent = the run's own borderline flag. */
  borderlineConfidence: probability.optional(),
  borderlineMargin: probability.optional(),
});
/** Why a customer sits between their top two segments. */
export interface BorderlineWhy {
  /** Features ranked by |contribution| to log(p_top / p_second); positive pulls to the top segment. */
  terms: { feature: string; label: string; contribution: number; fits: string }[];
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

// ---------------------------------------------------------------------------------------------
// Review

export const reviewQueueInput = z.strictObject({
  runId,
  offset: pageOffset,
  limit: pageLimit,
  status: z.enum(['all', 'open', 'done']).default('all'),
});
/** A queued customer; `revenue` (spend in the window) is the spend at stake the queue is ordered by. */
export interface ReviewItem extends MembershipRow {
  reasons: ('borderline' | 'atypical' | 'mover')[];
  why: BorderlineWhy | null;
  /** The customer's model features (original units) beside the medians of the top two segments. */
  featureComparison: { feature: string; label: string; value: number | null; topMedian: number | null; secondMedian: number | null }[];
  previousSegmentName: string | null;
  previousDecision: ReviewDecision | null;
}
export interface ReviewDecision {
  action: ReviewAction;
  /** The segment the decision places the customer in (keep: the model's; move: the target). */
  segmentName: string | null;
  note: string | null;
  reviewer: string | null;
  decidedAt: string;
  /** Run the decision was made in when carried over from an earlier month; null when made here. */
  carriedFromRunId: number | null;
}
export interface ReviewQueuePage {
  runId: number;
  total: number;
  done: number;
  offset: number;
  rows: ReviewItem[];
}

export const decideReviewInput = z
  .strictObject({
    runId,
    customerId: nonEmpty('customerId'),
    action: z.enum(reviewActions),
    segment: z.number().int().min(0).optional(),
    note: z.string().max(2000).default(''),
    reviewer: z.string().max(200).default(''),
  })
  .refine((value) => value.action !== 'move' || value.segment !== undefined, {
    message: 'a move needs the target segment',
    path: ['segment'],
  });

export const renameSegmentInput = z.strictObject({
  runId,
  segment: z.number().int().min(0),
  name: nonEmpty('name').max(80),
});

// ---------------------------------------------------------------------------------------------
// Movement

export interface DriftWarning {
  segmentName: string;
  kind: 'mean-shift' | 'share-change';
  /** Feature for mean shifts; null for share changes. */
  feature: string | null;
  /** Shift in parent standard deviations, or share change in percentage points. */
  amount: number;
  message: string;
}
/** Movement against the parent run; `parentRunId` null (and everything empty) for a first run. */
export interface MovementResult {
  runId: number;
  parentRunId: number | null;
  parentSegments: { segment: number; name: string }[];
  currentSegments: { segment: number; name: string }[];
  /** matrix[i][j] = customers in parent segment i and current segment j. */
  matrix: number[][];
  /** Customers placed in both runs (the matrix's sum). */
  common: number;
  entered: number;
  left: number;
  /** Adjusted Rand index on common customers, null without a parent. */
  stability: number | null;
  warnings: DriftWarning[];
  /** Refit only: parent segments without a match, and segments new this month. */
  retired: string[];
  added: string[];
}

// ---------------------------------------------------------------------------------------------
// Export and demo

export const csvDialects = ['comma', 'semicolon'] as const;
export type CsvDialect = (typeof csvDialects)[number];

export const exportRunInput = z.strictObject({
  runId,
  out: nonEmpty('out'),
  format: z.enum(['xlsx', 'csv']).default('xlsx'),
  /** Final segment names to list; absent = every segment. */
  segments: z.array(nonEmpty('segment name')).optional(),
  minConfidence: probability.default(0),
  includeReviewed: z.boolean().default(true),
  /** CSV only: `comma` (comma-separated, decimal point) or `semicolon` (semicolon-separated, decimal comma: locales that write 1.234,56). */
  csvDialect: z.enum(csvDialects).default('comma'),
  /**
   * CSV only: write ids and other text exactly as stored, without the apostrophe put before text
   * beginning with = + - @ (or a tab, CR, LF). For lists another system reads by id. Risk: a
   * spreadsheet program that opens such a file may run that text as a formula.
   */
  csvRawIds: z.boolean().default(false),
});
/** Exactly the `export --json` object of DESIGN.md §10. */
export interface ExportResult {
  out: string;
  sheets: string[];
  customersExported: number;
  suppressedNoConsent: number;
}

export const loadDemoInput = z.strictObject({
  /** Absent = the session's demo size (6,000 customers unless the host was started with another). */
  customers: z.number().int().min(50).max(200000).optional(),
  seed: z.number().int().min(0).default(1),
});
/** Exactly the `demo --db --json` object of DESIGN.md §10. */
export interface DemoResult {
  db: string;
  customers: number;
  receipts: number;
  visits: number;
}

// ---------------------------------------------------------------------------------------------
// Tasks

export const taskInput = z.strictObject({ taskId: nonEmpty('taskId') });
export interface CancelResult {
  taskId: string;
  /** False when the task had already finished. */
  cancelled: boolean;
}

// ---------------------------------------------------------------------------------------------
// The method table: name → input schema. Output types are in `ApiOutputs`.

export const apiSchemas = {
  appInfo: appInfoInput,
  openDatabase: openDatabaseInput,
  databaseInfo: databaseInfoInput,
  previewFile: previewFileInput,
  importFile: importFileInput,
  listImports: listImportsInput,
  importReport: importReportInput,
  savedMapping: savedMappingInput,
  modelOptions: modelOptionsInput,
  startRun: startRunInput,
  listRuns: listRunsInput,
  runSummary: runInput,
  segments: runInput,
  sweepTable: runInput,
  segmentSample: segmentSampleInput,
  featureDistribution: featureDistributionInput,
  membershipsPage: membershipsPageInput,
  certainty: certaintyInput,
  borderline: borderlineInput,
  reviewQueue: reviewQueueInput,
  decideReview: decideReviewInput,
  renameSegment: renameSegmentInput,
  movement: runInput,
  exportRun: exportRunInput,
  loadDemo: loadDemoInput,
  cancelTask: taskInput,
  taskStatus: taskInput,
} as const;

export type ApiMethod = keyof typeof apiSchemas;

/** The long tasks and what their `done` event carries. */
export interface TaskResults {
  importFile: ImportResult;
  startRun: RunSummary;
  exportRun: ExportResult;
  loadDemo: DemoResult;
}
export type LongTaskMethod = keyof TaskResults;
export const longTaskMethods: readonly LongTaskMethod[] = ['importFile', 'startRun', 'exportRun', 'loadDemo'];

export interface ApiOutputs {
  appInfo: AppInfo;
  openDatabase: DatabaseInfo;
  databaseInfo: DatabaseInfo;
  previewFile: FilePreview;
  importFile: TaskStarted<'importFile'>;
  listImports: ImportRecord[];
  importReport: ImportReportPage;
  savedMapping: SavedMapping;
  modelOptions: ModelOptions;
  startRun: TaskStarted<'startRun'>;
  listRuns: RunListItem[];
  runSummary: RunDetail;
  segments: SegmentsResult;
  sweepTable: SweepRow[];
  segmentSample: SegmentSample;
  featureDistribution: FeatureDistribution;
  membershipsPage: MembershipsPage;
  certainty: CertaintySummary;
  borderline: BorderlinePage;
  reviewQueue: ReviewQueuePage;
  decideReview: ReviewItem;
  renameSegment: SegmentProfile;
  movement: MovementResult;
  exportRun: TaskStarted<'exportRun'>;
  loadDemo: TaskStarted<'loadDemo'>;
  cancelTask: CancelResult;
  taskStatus: TaskStatus;
}

/** What the caller sends: the schema's input side (defaults may be left out). */
export type ApiInput<M extends ApiMethod> = z.input<(typeof apiSchemas)[M]>;
/** What a handler receives after validation (defaults filled in). */
export type ApiParsedInput<M extends ApiMethod> = z.output<(typeof apiSchemas)[M]>;
export type ApiOutput<M extends ApiMethod> = ApiOutputs[M];

/** The API as the screens see it, whatever the transport. */
export type Api = { [M in ApiMethod]: (input: ApiInput<M>) => Promise<ApiOutput<M>> };

// ---------------------------------------------------------------------------------------------
// What a shell adds around the Api (the renderer's one entry point)

/** Commands the application menu sends to the screens. */
export type MenuCommand =
  | { command: 'database-opened'; path: string }
  | { command: 'import-file'; path: string }
  | { command: 'export' }
  /** The user accepted the first-start offer; the demo is loading as this task. */
  | { command: 'demo-started'; taskId: string };

export interface SpendmixShell {
  kind: 'electron' | 'browser';
  /** Native open dialog (Electron); null where there is none or the user cancelled. */
  chooseOpenFile(options: { title: string; extensions: string[] }): Promise<string | null>;
  /** Native save dialog (Electron); null where there is none or the user cancelled. */
  chooseSavePath(options: { title: string; defaultName: string; extensions: string[] }): Promise<string | null>;
  /**
   * Turns a File the user dropped or chose into a path the core can read: its own path in
   * Electron, an upload into the host's session folder in the browser.
   */
  pathForFile(file: File): Promise<string>;
  onMenuCommand(listener: (command: MenuCommand) => void): () => void;
}

/** One call's answer over a transport: the value, or the error with its fields intact. */
export type CallOutcome<T = unknown> = { ok: true; value: T } | { ok: false; error: ApiError };

/**
 * What the Electron preload exposes as `window.spendmix` (contextBridge): the task-shaped API
 * and the shell's dialogs, nothing else. `call` only reaches methods of `apiSchemas`; the main
 * process validates every input with their zod schemas and checks the sending frame.
 */
export interface SpendmixBridge {
  call(method: ApiMethod, input: unknown): Promise<CallOutcome>;
  onTaskEvent(listener: (event: TaskEvent) => void): () => void;
  chooseOpenFile(options: { title: string; extensions: string[] }): Promise<CallOutcome<string | null>>;
  chooseSavePath(options: { title: string; defaultName: string; extensions: string[] }): Promise<CallOutcome<string | null>>;
  /** webUtils.getPathForFile: the dropped file's path on disk ('' when it has none). */
  pathForFile(file: File): string;
  onMenuCommand(listener: (command: MenuCommand) => void): () => void;
}

/**
 * The browser host's HTTP surface (DESIGN.md §12), for the browser client:
 * - `POST /api/<method>` with a JSON body → 200 `CallOutcome` ok, or 400 (input) / 409
 *   (cancelled) / 500 (internal) with `CallOutcome` not ok;
 * - `GET /api/events` → server-sent events, one `TaskEvent` per `data:` line;
 * - `POST /api/upload?name=<file name>` with the file's bytes → `{ path }` in the session folder.
 * Every `/api/` request carries the session token, as the `x-spendmix-token` header or, where a
 * header cannot be set (EventSource), the `token` query parameter; without it: 401.
 */
export const tokenHeader = 'x-spendmix-token';
/** The header's name as a type, so the renderer (which may import types only) is checked against it. */
export type TokenHeader = typeof tokenHeader;

/** What `renderer/src/api-client` hands the screens. */
export interface SpendmixClient {
  api: Api;
  shell: SpendmixShell;
  /** Every task event, for progress bars; returns the unsubscribe function. */
  onTaskEvent(listener: (event: TaskEvent) => void): () => void;
  /** Resolves with the task's result, rejects with an Error carrying `ApiError` fields. */
  waitForTask<M extends LongTaskMethod>(
    started: TaskStarted<M>,
    onProgress?: (progress: TaskProgress) => void,
  ): Promise<TaskResults[M]>;
}
