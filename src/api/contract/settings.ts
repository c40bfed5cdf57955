import { z } from 'zod';
import { named, nonEmpty, probability, runId } from './fields.js';
import { isoDate } from './fields.js';

/**
 * Every setting of a segmentation run, in one place: its limits, its default and its name. This
 * is the only source of them; the Model screen, `refresh` (a flag per setting, see
 * src/cli/commands/refresh.ts), a settings file (`refresh --settings`) and the fit-matrix tool all
 * read them from here. A new setting is one line in the fragment it belongs to.
 */

export const covarianceTypes = ['full', 'diag', 'spherical', 'tied'] as const;
export type CovarianceType = (typeof covarianceTypes)[number];

/**
 * How each EM start is seeded. mixed (the default): start 1 from model-based hierarchical
 * agglomeration (Fraley 1998), then k-means (k-means++ seeds) and random partitions in turn, so
 * restarts really differ; the others use one kind for every start.
 */
export const initMethods = ['mixed', 'hierarchical', 'kmeans', 'kmeans++', 'random', 'random-partition'] as const;
export type InitMethod = (typeof initMethods)[number];

export const selectionCriteria = ['bic', 'icl'] as const;
export type SelectionCriterion = (typeof selectionCriteria)[number];

export const refreshModes = ['refit', 'rescore'] as const;
export type RefreshMode = (typeof refreshModes)[number];

/** Computed from the receipts and visits, or the imported per-customer feature table. */
export const featureSources = ['receipts', 'imported'] as const;
export type FeatureSource = (typeof featureSources)[number];

/** The largest number of components a run may fit. */
export const MAX_COMPONENTS = 20;

/**
 * How one model feature is transformed before the fit: log1p or cube root, then clipping, then z-score. Stored
 * with the run (with the fitted means and spreads) so next month's data is scored the same way.
 */
export interface FeatureTransformSpec {
  feature: string;
  log1p: boolean;
  /** Cube root instead of log1p (never both). */
  cubeRoot: boolean;
  /** Clip below/above these percentiles (0–100); null = no clipping on that side. */
  clipLowerPercentile: number | null;
  clipUpperPercentile: number | null;
  zScore: boolean;
}

/**
 * Features the model uses when the analyst picks none and the features come from receipts
 * (DESIGN.md §4): how often (visit rate), how much per trip (basket) and how recently, measured in
 * the customer's own usual gaps between visits. They describe different behaviour and none is a
 * function of the others; spend per month is visits × basket, so it is not among them (with both
 * it would make the set nearly collinear, and full covariances would then fit that thin direction
 * instead of the groups). Recency is in usual gaps rather than days (a departure from DESIGN.md
 * §4, measured in the README): days since the last visit mostly repeat the visit rate, with a
 * spread of their own along which components split tiers into "recent" and "not recent".
 */
export const defaultModelFeatures: readonly string[] = ['visits_per_month', 'average_basket', 'gaps_since_last_visit'];

/** The mix feature added to the defaults where the receipts carry departments (DESIGN.md §4). */
export const defaultMixFeature = 'fresh_share';

/** Features that are counts, money or days: skewed to the right, so log1p before the z-score by default (common practice). */
export const logScaleFeatures: readonly string[] = ['spend_per_month', 'visits_per_month', 'average_basket', 'days_since_last_visit'];

/**
 * Features that are waiting times in a customer's own rhythm: for a steady shopper the time since
 * the last visit in usual gaps is spread like an exponential, which a log turns into a long left
 * tail and the cube root into nearly a normal (Wilson & Hilferty 1931); measured in the README.
 */
export const cubeRootFeatures: readonly string[] = ['gaps_since_last_visit'];

/** Departments whose spend counts as fresh (the fresh-share feature; common practice in grocery reporting). */
export const defaultFreshCategories: readonly string[] = ['fresh', 'produce', 'fruit', 'vegetables', 'meat', 'fish', 'bakery', 'dairy', 'deli'];

/**
 * The transform a feature gets when none is chosen: log1p then z-score for the skewed money, rate
 * and day features computed from receipts (common practice), the cube root then z-score for the
 * gaps since the last visit, z-score alone otherwise (shares, trends, imported features).
 */
export function defaultTransform(feature: string, source: FeatureSource): FeatureTransformSpec {
  return {
    feature,
    log1p: source === 'receipts' && logScaleFeatures.includes(feature),
    cubeRoot: source === 'receipts' && cubeRootFeatures.includes(feature),
    clipLowerPercentile: null,
    clipUpperPercentile: null,
    zScore: true,
  };
}

const percentile = z.number().min(0).max(100);

/** One feature of the model with its transform; a transform field left out takes the feature's default. */
export const transformSpecInput = z
  .strictObject({
    feature: named(nonEmpty, 'feature name', '--features'),
    log1p: named(z.boolean().optional(), "log(1 + x) before the fit (absent: the feature's default)", '--transform'),
    cubeRoot: named(z.boolean().optional(), "cube root before the fit, instead of log1p (absent: the feature's default)", '--transform'),
    clipLowerPercentile: named(percentile.nullable().optional(), 'percentile to clip below (null: none)', '--transform'),
    clipUpperPercentile: named(percentile.nullable().optional(), 'percentile to clip above (null: none)', '--transform'),
    zScore: named(z.boolean().optional(), 'z-score after the other steps (absent: yes)', '--transform'),
  })
  .refine((spec) => !(spec.log1p && spec.cubeRoot), { message: 'choose log1p or the cube root, not both', path: ['cubeRoot'] })
  .refine((spec) => spec.clipLowerPercentile == null || spec.clipUpperPercentile == null || spec.clipLowerPercentile < spec.clipUpperPercentile, {
    message: 'must be below the upper clipping percentile',
    path: ['clipLowerPercentile'],
  });

/** The fitting engine's settings: shared by a run and by the fit-matrix tool. */
export const fitSettings = {
  restarts: named(z.number().int().min(1).max(50).default(5), 'EM restarts per fit (the best log-likelihood wins)', '--restarts'),
  seed: named(z.number().int().min(0).max(2 ** 31 - 1).default(0), 'random seed (same seed, same result)', '--seed'),
  tol: named(z.number().min(0).max(1).default(1e-3), 'convergence tolerance on the mean log-likelihood: EM stops when a step gains less and so does what is projected still to come', '--tol'),
  maxIterations: named(z.number().int().min(1).max(100_000).default(200), 'most EM iterations per start', '--max-iter'),
  regularization: named(z.number().min(0).max(1).default(1e-6), 'covariance regularisation added to the diagonal', '--reg'),
  init: named(z.enum(initMethods).default('mixed'), 'how each start is seeded (mixed: hierarchical agglomeration, then k-means and random partitions in turn)', '--init'),
};

/** Which customers and which month: the window, where features come from, who is too new. */
export const windowSettings = {
  asOf: named(isoDate, 'the last day of the window', '--as-of <YYYY-MM-DD>'),
  windowMonths: named(z.number().int().min(1).max(60).default(12), 'the window in months', '--window-months'),
  source: named(
    z.enum(featureSources).optional(),
    'where the features come from (absent: receipts when the database has any, else the imported feature table)',
    '--source',
  ),
  freshCategories: named(z.array(nonEmpty).min(1).default([...defaultFreshCategories]), 'departments counted as fresh', '--fresh-categories'),
  minPurchases: named(z.number().int().min(0).max(1_000_000).default(2), 'fewest purchases for a customer to be placed', '--min-purchases'),
  minTenureMonths: named(z.number().int().min(0).max(1200).default(2), 'shortest tenure in months for a customer to be placed', '--min-tenure-months'),
};

/** What is fitted and how the model is chosen. */
export const modelSettings = {
  mode: named(z.enum(refreshModes).default('refit'), "how the model is made, refit or rescore (refit fits anew; rescore applies the parent run's model)", '--mode'),
  parentRunId: named(
    runId.nullable().optional(),
    'the parent run (absent: the latest run with an earlier as-of date; none: no parent, start afresh)',
    '--parent',
  ),
  features: named(
    z
      .array(transformSpecInput)
      .min(1)
      .refine((specs) => new Set(specs.map((spec) => spec.feature)).size === specs.length, 'may name each feature only once')
      .optional(),
    'model features with their transforms (absent: the defaults of DESIGN.md §4)',
    '--features',
  ),
  k: named(z.union([z.number().int().min(1).max(MAX_COMPONENTS), z.literal('auto')]).default('auto'), 'number of components, or auto', '--k'),
  kMin: named(z.number().int().min(1).max(MAX_COMPONENTS).default(2), 'smallest k tried with k auto', '--k-min'),
  kMax: named(z.number().int().min(1).max(MAX_COMPONENTS).default(8), 'largest k tried with k auto', '--k-max'),
  // Diagonal by default: components are building blocks that combining joins into segments, so a
  // segment's correlated shape comes from several diagonal components, each needing 2d parameters
  // instead of d(d+3)/2. Measured on two seeds of the demo chain and five of the second test chain,
  // against auto (all four structures): the same or a higher ARI against the generators' truth on
  // every one, and a run about 3 × faster (README, "Segments").
  covariance: named(
    z.union([z.enum(covarianceTypes), z.literal('auto')]).default('diag'),
    'covariance structure, or auto to try all four',
    '--covariance',
  ),
  criterion: named(z.enum(selectionCriteria).default('bic'), 'information criterion that chooses the model', '--criterion'),
  fitSample: named(z.number().int().min(1).max(1_000_000_000).nullable().default(null), 'fit on a seeded random sample of this many placed customers, then score everyone (none: fit on all)', '--fit-sample'),
  ...fitSettings,
};

/** A component index (0-based) in a segmentation. */
const componentIndex = z.number().int().min(0).max(MAX_COMPONENTS - 1);

/**
 * How the Gaussian components become the segments an analyst acts on (DESIGN.md §5): combined
 * hierarchically by the entropy criterion, down to the number of segments chosen at the entropy
 * curve's flattening ('auto': merged while the merged customers are unsure between the two groups) or given here; or an explicit grouping (what `runs --settings-out`
 * writes after merges and splits by hand, so `refresh --settings` repeats the month exactly).
 */
export const segmentSettings = {
  segmentCount: named(
    z.union([z.number().int().min(1).max(MAX_COMPONENTS), z.literal('auto')]).default('auto'),
    'number of segments the components are combined into, or auto (merged while customers are unsure between the two, where the entropy curve flattens)',
    '--segment-count',
  ),
  segmentation: named(
    z.array(z.array(componentIndex).min(1)).min(1).nullable().optional(),
    'segments as groups of component indices, e.g. [[0, 2], [1], [3]] (absent: combined by the number of segments)',
    '--segmentation',
  ),
};

/**
 * What one person can review in a month: our choice, about two working days at a few minutes a
 * customer (a look at the profile, last month's decision and a note). The analyst sets their own.
 */
export const DEFAULT_REVIEW_CAPACITY = 200;

/** Who is flagged and queued for review (DESIGN.md §5, §7). */
export const flagSettings = {
  borderlineConfidence: named(probability.default(0.7), 'borderline below this confidence', '--borderline-confidence'),
  borderlineMargin: named(probability.default(0.2), 'borderline below this margin', '--borderline-margin'),
  atypicalPercentile: named(z.number().min(0).max(50).default(1), 'atypical below this percentile of log density', '--atypical-percentile'),
  reviewMoversBelowConfidence: named(
    probability.nullable().default(null),
    'also queue customers who changed segment with confidence below this (none: off)',
    '--review-movers-below',
  ),
  reviewCapacity: named(
    z.number().int().min(0).max(1_000_000).default(DEFAULT_REVIEW_CAPACITY),
    'customers one person can review this month (the queue holds at most this many, by what a decision is worth; the rest are counted)',
    '--review-capacity',
  ),
};

export const startRunInput = z
  .strictObject({ ...windowSettings, ...modelSettings, ...segmentSettings, ...flagSettings })
  .refine((value) => value.kMin <= value.kMax, { message: 'must not exceed kMax (--k-max)', path: ['kMin'] })
  .refine((value) => value.k === 'auto' || value.segmentCount === 'auto' || value.segmentCount <= value.k, {
    message: 'must not exceed k (--k): a segment is one or more components',
    path: ['segmentCount'],
  })
  .refine((value) => value.k !== 'auto' || value.segmentCount === 'auto' || value.segmentCount <= value.kMax, {
    message: 'must not exceed kMax (--k-max) with k auto: a segment is one or more components',
    path: ['segmentCount'],
  })
  .refine((value) => !value.segmentation || value.segmentCount === 'auto' || value.segmentCount === value.segmentation.length, {
    message: 'must be auto or the number of groups the segmentation lists',
    path: ['segmentCount'],
  })
  .refine((value) => !value.segmentation || new Set(value.segmentation.flat()).size === value.segmentation.flat().length, {
    message: 'may name each component in one group only',
    path: ['segmentation'],
  });

/** A run's settings as the caller sends them (defaults may be left out). */
export type StartRunInput = z.input<typeof startRunInput>;
/** A run's settings with the defaults filled in. */
export type RunSettings = z.output<typeof startRunInput>;

/**
 * Settings with the choices that depend on the data made: where the features come from, and
 * which features with which transforms. What the runs core takes.
 */
export type ExplicitRunSettings = Omit<RunSettings, 'source' | 'features'> & {
  source: FeatureSource;
  features: FeatureTransformSpec[];
};

/**
 * Settings as stored with a run: the parent resolved as well (null for a first run), the features
 * the model actually used. A valid startRun input: sending it again repeats the month exactly.
 */
export type StoredRunSettings = Omit<ExplicitRunSettings, 'parentRunId'> & { parentRunId: number | null };

/** What the data say about feature defaults (asked of the database only when needed). */
export interface FeatureData {
  hasReceipts: () => boolean;
  /** Whether the receipts carry departments (so the fresh share is known). */
  hasDepartments: () => boolean;
  importedFeatureNames: () => string[];
}

/** The default features for receipts: the three of `defaultModelFeatures`, plus the fresh share where the receipts carry departments. */
export function defaultReceiptFeatures(data: Pick<FeatureData, 'hasDepartments'>): string[] {
  return data.hasDepartments() ? [...defaultModelFeatures, defaultMixFeature] : [...defaultModelFeatures];
}

/**
 * Makes the data-dependent defaults explicit: the source (receipts when the database has any,
 * else the imported feature table), the features (the defaults above for receipts, with the fresh
 * share where the receipts carry departments; every imported feature otherwise) and each
 * feature's transform where one was left out.
 */
export function explicitRunSettings(settings: RunSettings, data: FeatureData): ExplicitRunSettings {
  const source = settings.source ?? (data.hasReceipts() ? 'receipts' : 'imported');
  const chosen: z.output<typeof transformSpecInput>[] =
    settings.features ?? (source === 'receipts' ? defaultReceiptFeatures(data) : data.importedFeatureNames()).map((feature) => ({ feature }));
  const features = chosen.map((spec): FeatureTransformSpec => {
    const fallback = defaultTransform(spec.feature, source);
    return {
      feature: spec.feature,
      // One shaping step: choosing one of log1p and cube root turns the other off.
      log1p: spec.log1p ?? (spec.cubeRoot ? false : fallback.log1p),
      cubeRoot: spec.cubeRoot ?? (spec.log1p ? false : fallback.cubeRoot),
      clipLowerPercentile: spec.clipLowerPercentile ?? fallback.clipLowerPercentile,
      clipUpperPercentile: spec.clipUpperPercentile ?? fallback.clipUpperPercentile,
      zScore: spec.zScore ?? fallback.zScore,
    };
  });
  return { ...settings, source, features };
}

/** The fit-matrix tool's input: a CSV's numeric columns fitted as they are (DESIGN.md §10). */
export const fitMatrixInput = z
  .strictObject({
    input: named(nonEmpty, 'the CSV file to fit', '--input <csv>'),
    k: named(z.union([z.number().int().min(1), z.literal('auto')]), 'number of components, or auto to choose 1…kMax by BIC', '--k'),
    kMax: named(z.number().int().min(1).max(100).optional(), 'largest k tried with k auto (absent: 8)', '--k-max'),
    covariance: named(z.enum(covarianceTypes), 'covariance structure', '--covariance'),
    memberships: named(nonEmpty.optional(), "file for each row's segment, posteriors, confidence, margin and log density", '--memberships <out.csv>'),
    ...fitSettings,
  })
  .refine((value) => value.kMax === undefined || value.k === 'auto', { message: 'applies only with k auto (--k auto)', path: ['kMax'] });
export type FitMatrixInput = z.output<typeof fitMatrixInput>;
/** Largest k fit-matrix tries with k auto when kMax is left out. */
export const FIT_MATRIX_DEFAULT_K_MAX = 8;
