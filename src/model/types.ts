import type { SweepRow as ContractSweepRow } from '../api/contract.js';
/**
 * Public shapes of the mixture engine. Other layers (runs, api, cli) code against these; keep them
 * stable. All matrices are row-major Float64Arrays with their shape written beside them.
 */

/** Covariance structures, named as scikit-learn's GaussianMixture names them. */
export type CovarianceType = 'full' | 'diag' | 'spherical' | 'tied';

export const covarianceTypes: readonly CovarianceType[] = ['full', 'diag', 'spherical', 'tied'];

/**
 * How a restart starts (init.ts):
 * - 'kmeans': k-means++ seeding then Lloyd's k-means; 'kmeans++': the seeding alone;
 * - 'random': k distinct random rows as seeds, each row to its nearest seed;
 * - 'random-partition': a random partition of a small random sample of rows;
 * - 'hierarchical': model-based hierarchical agglomeration (Fraley 1998) on SVD-scaled data;
 * - 'mixed': restart 1 hierarchical, then k-means and random partitions in turn.
 */
export type InitMethod = 'mixed' | 'hierarchical' | 'kmeans' | 'kmeans++' | 'random' | 'random-partition';

export const initMethods: readonly InitMethod[] = ['mixed', 'hierarchical', 'kmeans', 'kmeans++', 'random', 'random-partition'];

/** The start one restart actually used ('mixed' resolved). */
export type StartMethod = Exclude<InitMethod, 'mixed'>;

/** 'reject': NaN/Infinity anywhere is bad input. 'em': NaN marks a missing value, fitted by EM. */
export type MissingPolicy = 'reject' | 'em';

/** Model-selection criterion for a sweep; both are "lower is better". */
export type SelectionCriterion = 'bic' | 'icl';

/**
 * An n × d data matrix: `values[i * cols + j]` is feature j of row i (row-major).
 * NaN marks a missing value, allowed only with `missing: 'em'`.
 */
export interface DataMatrix {
  values: Float64Array;
  rows: number;
  cols: number;
  /** Optional feature names, used in error messages (zero-variance feature, bad cell). */
  columnNames?: readonly string[];
}

/**
 * A fitted Gaussian mixture with k components in d dimensions.
 * - weights: k, summing to 1
 * - means: k × d
 * - covariances: k × d × d, always expanded to full symmetric matrices (also for diag, spherical
 *   and tied, where every component repeats the shared matrix), so consumers never branch on
 *   the structure; the structure itself is kept in `covarianceType`.
 * - precisionCholesky: k × d × d, lower-triangular W_k with W_k Σ_k W_kᵀ = I (W_k = L_k⁻¹ for
 *   Σ_k = L_k L_kᵀ), so that (x−μ)ᵀ Σ⁻¹ (x−μ) = ‖W (x−μ)‖² and log|Σ_k|^(-1/2) = Σ log diag W_k.
 */
export interface MixtureModel {
  covarianceType: CovarianceType;
  components: number;
  dimensions: number;
  weights: Float64Array;
  means: Float64Array;
  covariances: Float64Array;
  precisionCholesky: Float64Array;
  /** Regularisation that was added to the covariance diagonals when fitting. */
  regularization: number;
}

/** Progress of a fit, reported after each EM iteration (and at each restart's start). */
export interface FitProgress {
  k: number;
  covarianceType: CovarianceType;
  /** 0-based restart index. */
  restart: number;
  /** EM iterations completed in this restart (0 at the start of the restart). */
  iteration: number;
  /** Mean log-likelihood per row at this iteration (NaN at iteration 0). */
  logLikelihood: number;
}

/**
 * Options of one fit. The engine has no defaults of its own for the run settings: callers pass
 * every value (the app's and the command line's defaults live where their settings are defined).
 */
export interface FitOptions {
  /** Number of mixture components k ≥ 1. */
  components: number;
  covarianceType: CovarianceType;
  /** Independent starts; the valid one with the highest log-likelihood wins. */
  restarts: number;
  /** Seed of the pure-rand generator; same seed, same bits. */
  seed: number;
  /** Convergence threshold on the mean log-likelihood: a step's gain and the gain projected still to come (climbHasConverged; 0 runs to maxIterations). */
  tol: number;
  /** Maximum EM iterations per restart. */
  maxIterations: number;
  /** Added to covariance diagonals. */
  regularization: number;
  init: InitMethod;
  /** Missing values: NaN is bad input ('reject', when not given) or a missing value ('em'). */
  missing?: MissingPolicy;
  signal?: AbortSignal;
  onProgress?: (progress: FitProgress) => void;
}

export interface FitResult {
  model: MixtureModel;
  /** Total log-likelihood over rows (observed coordinates only when values are missing). */
  logLikelihood: number;
  /** logLikelihood / n. */
  meanLogLikelihood: number;
  /** −2 log L + p ln n (lower is better). */
  bic: number;
  /** −2 log L + 2p. */
  aic: number;
  /** BIC − 2 Σᵢ log z_i,MAP (BIC plus twice the entropy of the hard assignments). */
  icl: number;
  /** Free parameters p, counted as scikit-learn's GaussianMixture._n_parameters. */
  parameterCount: number;
  /**
   * Why the fit may not compete in model choice (a component with fewer effective members than
   * its covariance needs, or a covariance held up only by the regularisation floor; validity.ts),
   * or null for a valid fit. A refused fit is the best restart of all when none was valid.
   */
  refused: string | null;
  /** Whether the winning restart met tol before maxIterations. */
  converged: boolean;
  /** EM iterations of the winning restart. */
  iterations: number;
  /** Human-readable notes: emptied components re-seeded, covariances regularised, … */
  warnings: string[];
  /** Final total log-likelihood of every restart, in restart order. */
  restartLogLikelihoods: number[];
  /** The start each restart used, in restart order. */
  restartStarts: StartMethod[];
  /** Why each restart would be refused (null: valid), in restart order. */
  restartRefusals: (string | null)[];
  /** 0-based index of the winning restart. */
  bestRestart: number;
}

export interface SweepOptions extends Omit<FitOptions, 'components' | 'covarianceType'> {
  /** Inclusive range of k to try, [min, max], 1 ≤ min ≤ max. */
  componentRange: [number, number];
  covarianceTypes: readonly CovarianceType[];
  /** Criterion for the winner among the fits that are not refused. */
  criterion: SelectionCriterion;
  /** Worker threads (default os.availableParallelism(), or this thread when the work is small; 0 = this thread). */
  threads?: number;
}

/** One fit of the model-selection table: the contract's row without `chosen` (decided when read). */
export type SweepRow = Omit<ContractSweepRow, 'chosen'>;

export interface SweepResult {
  /** One row per (k, structure), ordered by structure as given, then k ascending; refused fits included. */
  table: SweepRow[];
  best: FitResult;
  bestRow: SweepRow;
  criterion: SelectionCriterion;
}

/**
 * Per-row results of scoring rows with a fitted model.
 * - posteriors: n × k, rows sum to 1
 * - topSegment / secondSegment: n, 0-based component indices (secondSegment is -1 when k = 1)
 * - confidence: n, highest posterior; margin: n, highest minus second highest (1 when k = 1)
 * - logDensity: n, log of the mixture density at the row (marginal over observed features)
 * - partial: n, 1 where the row had missing values and was scored on the marginal of its
 *   observed features
 */
export interface Memberships {
  rows: number;
  components: number;
  posteriors: Float64Array;
  topSegment: Int32Array;
  secondSegment: Int32Array;
  confidence: Float64Array;
  margin: Float64Array;
  logDensity: Float64Array;
  partial: Uint8Array;
}

/** JSON form of a MixtureModel; numbers are plain JSON numbers (which round-trip doubles exactly). */
export interface MixtureModelJSON {
  format: 'spendmix-mixture';
  version: 1;
  covarianceType: CovarianceType;
  components: number;
  dimensions: number;
  regularization: number;
  weights: number[];
  means: number[][];
  covariances: number[][][];
}

/** Signatures of the engine's entry points (implemented in this folder, re-exported by index.ts). */
export type FitMixtureFunction = (data: DataMatrix, options: FitOptions) => FitResult;
/** `threads` as in SweepOptions. */
export type FitMixtureParallelFunction = (data: DataMatrix, options: FitOptions & { threads?: number }) => Promise<FitResult>;
export type SweepMixturesFunction = (data: DataMatrix, options: SweepOptions) => Promise<SweepResult>;
export type ScoreRowsFunction = (model: MixtureModel, data: DataMatrix) => Memberships;
/** Returns a copy of the data with every NaN replaced by Σ_k posterior_k · E[x_missing | x_observed, k]. */
export type ImputeMissingFunction = (model: MixtureModel, data: DataMatrix) => DataMatrix;
export type ParameterCountFunction = (k: number, d: number, covarianceType: CovarianceType) => number;
