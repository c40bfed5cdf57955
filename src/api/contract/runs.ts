import { z } from 'zod';
import { named, runId } from './fields.js';
import type { QueueCounts } from './review.js';
import type { SegmentationMethod } from './segments.js';
import type { CovarianceType, FeatureTransformSpec, RefreshMode, RunSettings, SelectionCriterion, StoredRunSettings } from './settings.js';

/** The Model screen, `refresh` and `runs`: options, run summaries, the stored runs. */

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

/** The `refresh --json` object of DESIGN.md §10. */
export interface RunSummary {
  runId: number;
  parentRunId: number | null;
  /** Gaussian components of the chosen model. */
  k: number;
  covariance: CovarianceType;
  bic: number;
  /** Segments the components are combined into (the length of `segments`). */
  segmentCount: number;
  /** How the segmentation was chosen: auto (where the entropy curve flattens), level (a number the analyst picked) or hand (merges and splits). */
  segmentation: SegmentationMethod;
  /** Customers placed in a segment (too-new customers excluded). */
  customers: number;
  tooNew: number;
  /** Borderline on segments: confidence or margin of the segment posteriors below the run's thresholds. */
  borderline: number;
  atypical: number;
  /** One entry per segment, in spend order (highest first), with its key and the components it is made of. */
  segments: { name: string; key: string; components: number[]; customers: number; share: number; revenueShare: number }[];
  /** Adjusted Rand index of segments against the parent on common customers; null for a first run. */
  stability: number | null;
  /** The review queue at the run's capacity: flagged, queued, and counted beyond it by reason. */
  review: QueueCounts;
  /** Warnings stored with the run (e.g. a nearly collinear feature set, naming the feature to drop). */
  warnings: string[];
}

export const listRunsInput = z.strictObject({});
/** One stored run: the summary's numbers without the segment table and the queue, plus when and how. */
export interface RunListItem extends Omit<RunSummary, 'segments' | 'review' | 'warnings'> {
  createdAt: string;
  asOf: string;
  windowMonths: number;
  mode: RefreshMode;
}

export const runInput = z.strictObject({ runId: named(runId, 'the run', '--run') });

export interface RunDetail extends RunSummary {
  asOf: string;
  windowMonths: number;
  mode: RefreshMode;
  createdAt: string;
  /** Everything the run was computed from; sent again as startRun input it repeats the month. */
  settings: StoredRunSettings;
  /** Features in model order with their stored transforms. */
  features: FeatureTransformSpec[];
  /** Every feature stored per customer (model features first). */
  storedFeatures: string[];
  logLikelihood: number;
  icl: number;
  criterion: SelectionCriterion;
  /** Parent segments that found no match in a refit. */
  retiredSegments: string[];
  /**
   * Placed customers the model was fitted on: the seeded fit sample's size when it is smaller than
   * `customers`, else all of them (everyone is scored either way); null for a rescore (the parent's model).
   */
  fittedOn: number | null;
  /**
   * The numbers of Gaussian components the fit tried: k when fixed; with k auto kMin to kMax, but
   * from the segment count when a fixed one asks for more (a segment is one or more components);
   * null for a rescore (the parent's model).
   */
  componentsSearched: { from: number; to: number } | null;
}

/** One fit of the model-selection table. */
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
  /**
   * Why the fit was refused for model choice (a component too small to estimate its covariance,
   * or one held up only by the regularisation floor), or null; a refused fit is never chosen.
   */
  refused: string | null;
  /** The model the run kept. */
  chosen: boolean;
}
