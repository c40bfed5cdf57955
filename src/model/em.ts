import { throwIfAborted } from '../errors.js';
import { akaikeInformationCriterion, bayesianInformationCriterion, integratedCompletedLikelihood, parameterCount } from './criteria.js';
import { emptyStatistics, expectationStep, expectationTerms, type ExpectationSummary, type SufficientStatistics } from './estep.js';
import { agglomerate, AGGLOMERATION_SAMPLE, sampleRows, type AgglomerationTree } from './agglomeration.js';
import { covarianceEstimators, factorWithRidge, rowCovariance } from './gaussian.js';
import { initialLabels, startMethodOf, statisticsFromLabels } from './init.js';
import { groupByMissingPattern, meanFilled, patternExpectationStep, type MissingPattern } from './missing.js';
import { maximizationStep, type MaximizationOutcome } from './mstep.js';
import { restartStream, type RandomStream } from './random.js';
import { resolveFitOptions, validateFitInput, type ResolvedFitOptions } from './validate.js';
import { dataScaleOf, refusalOf } from './validity.js';
import type { DataMatrix, FitOptions, FitProgress, FitResult, MixtureModel, StartMethod, SweepRow } from './types.js';

/** What one restart produced; restarts are independent, so any thread can run any of them. */
export interface RestartOutcome {
  restart: number;
  model: MixtureModel;
  logLikelihood: number;
  sumLogMaxPosterior: number;
  converged: boolean;
  iterations: number;
  warnings: string[];
  start: StartMethod;
  /** Why the restart's fit may not compete (validity.ts), or null. */
  refused: string | null;
}

/** Data prepared once per fit and shared by its restarts. */
export interface FitContext {
  values: Float64Array;
  rows: number;
  cols: number;
  /** Rows grouped by missing pattern; null when nothing is missing (the fast kernel runs). */
  patterns: MissingPattern[] | null;
  /** Values with NaNs filled by column means, for k-means and re-seeding; `values` when complete. */
  filledValues: Float64Array;
  /**
   * Initial labels by (k, init, seed, restart): they do not depend on the covariance structure,
   * so a sweep computes each k-means start once per thread, not once per structure.
   */
  initialLabels: Map<string, Int32Array>;
  /** Agglomeration trees by sample ('all' when every row takes part), built on first use. */
  trees: Map<string, AgglomerationTree>;
  /** Covariance of all rows (d × d) and W = L⁻¹ of it, for re-seeding and the validity test; built on first use. */
  covariance: Float64Array | null;
  dataScale: Float64Array | null;
}

/** Cached initial labels kept per context, at most this many bytes (oldest dropped first). */
const LABEL_CACHE_BYTES = 64 * 1024 * 1024;

/**
 * The agglomeration tree a hierarchical start of restart r cuts: of all rows when there are at
 * most AGGLOMERATION_SAMPLE (the same tree for every seed), else of a sample of that many drawn
 * with the restart's stream.
 */
function agglomerationTree(context: FitContext, seed: number, restart: number): AgglomerationTree {
  const sampled = context.rows > AGGLOMERATION_SAMPLE;
  const key = sampled ? `${seed}/${restart}` : 'all';
  let tree = context.trees.get(key);
  if (!tree) {
    const sample = sampleRows(context.rows, AGGLOMERATION_SAMPLE, restartStream(seed, 2 * restart)).sort();
    context.trees.set(key, (tree = agglomerate(context.filledValues, context.cols, sample)));
  }
  return tree;
}

function startingLabels(context: FitContext, options: ResolvedFitOptions, restart: number, start: StartMethod): Int32Array {
  const key = `${options.components}/${start}/${options.seed}/${restart}`;
  const cached = context.initialLabels.get(key);
  if (cached) return cached;
  const random = restartStream(options.seed, 2 * restart);
  const labels = initialLabels(context.filledValues, context.rows, context.cols, options.components, start, random, () =>
    agglomerationTree(context, options.seed, restart),
  );
  let bytes = labels.byteLength;
  for (const entry of context.initialLabels.values()) bytes += entry.byteLength;
  for (const [oldest, entry] of context.initialLabels) {
    if (bytes <= LABEL_CACHE_BYTES) break;
    context.initialLabels.delete(oldest);
    bytes -= entry.byteLength;
  }
  if (bytes <= LABEL_CACHE_BYTES) context.initialLabels.set(key, labels);
  return labels;
}

export function prepareFitContext(data: DataMatrix, anyMissing: boolean): FitContext {
  const { values, rows, cols } = data;
  return {
    values,
    rows,
    cols,
    patterns: anyMissing ? groupByMissingPattern(values, rows, cols) : null,
    filledValues: anyMissing ? meanFilled(values, rows, cols) : values,
    initialLabels: new Map(),
    trees: new Map(),
    covariance: null,
    dataScale: null,
  };
}

function dataCovariance(context: FitContext): Float64Array {
  context.covariance ??= rowCovariance(context.filledValues, context.rows, context.cols);
  return context.covariance;
}

function dataScale(context: FitContext): Float64Array {
  context.dataScale ??= dataScaleOf(dataCovariance(context), context.cols);
  return context.dataScale;
}

/** Collects warnings, counting repeats of the same kind instead of listing each. */
class WarningLog {
  private readonly entries = new Map<string, { text: string; count: number }>();

  add(key: string, text: string): void {
    const entry = this.entries.get(key);
    if (entry) entry.count++;
    else this.entries.set(key, { text, count: 1 });
  }

  list(): string[] {
    return [...this.entries.values()].map(({ text, count }) => (count > 1 ? `${text}; ${count} times in all.` : `${text}.`));
  }
}

/** Runs one E-step over the whole context with the kernel its data needs. */
function runExpectation(context: FitContext, model: MixtureModel, statistics: SufficientStatistics | null): ExpectationSummary {
  if (context.patterns) return patternExpectationStep(context.values, model, context.patterns, { statistics });
  return expectationStep(context.values, context.rows, expectationTerms(model), statistics, null);
}

/** Total and mean log-likelihood of a model on the context's rows (observed features only where missing). */
export function logLikelihoodOf(context: FitContext, model: MixtureModel): ExpectationSummary {
  return runExpectation(context, model, null);
}

function noteMaximization(outcome: MaximizationOutcome, iteration: number, warnings: WarningLog): void {
  for (const { component, added } of outcome.regularised) {
    warnings.add(
      `singular-${component}`,
      `Covariance of component ${component + 1} was singular at iteration ${iteration}; ${added.toPrecision(3)} was added to its diagonal`,
    );
  }
}

/** Re-seeds per component and restart before an emptied component is left empty. */
const MAX_RESEEDS = 3;

/**
 * Replaces emptied components: the first takes the worst-explained row as its mean (a random row
 * at the start, before any row has been explained), further ones random rows; each gets the
 * data's overall covariance (in the model's structure) and weight 1/k. A component that has
 * emptied MAX_RESEEDS times is left with its near-zero weight (finite, never NaN) and a warning
 * that the data seem to hold fewer groups. Returns whether anything was re-seeded.
 */
function reseedEmptied(
  model: MixtureModel,
  emptied: number[],
  worstRow: number,
  context: FitContext,
  random: RandomStream,
  iteration: number,
  warnings: WarningLog,
  reseeds: Int32Array,
): boolean {
  const { components: k, dimensions: d, covarianceType } = model;
  const overall = dataCovariance(context);
  let reseeded = false;
  emptied.forEach((component, position) => {
    if (reseeds[component] >= MAX_RESEEDS) {
      if (reseeds[component]++ > MAX_RESEEDS) return; // warned already
      warnings.add(
        `left-empty-${component}`,
        `Component ${component + 1} emptied again after ${MAX_RESEEDS} re-seeds and was left with weight near 0: the data may hold fewer than ${k} groups (try a smaller k)`,
      );
      return;
    }
    reseeds[component]++;
    reseeded = true;
    const fromWorst = position === 0 && worstRow >= 0;
    const row = fromWorst ? worstRow : random.integer(0, context.rows - 1);
    model.means.set(context.filledValues.subarray(row * d, row * d + d), component * d);
    if (covarianceType !== 'tied') {
      const offset = component * d * d;
      let average = 0;
      for (let a = 0; a < d; a++) average += overall[a * d + a] / d;
      for (let a = 0; a < d; a++) {
        for (let b = 0; b < d; b++) {
          const value = covarianceType === 'full' ? overall[a * d + b] : a !== b ? 0 : covarianceType === 'diag' ? overall[a * d + a] : average;
          model.covariances[offset + a * d + b] = value + (a === b ? model.regularization : 0);
        }
      }
    }
    model.weights[component] = 1 / k;
    warnings.add(
      `empty-${component}`,
      `Component ${component + 1} emptied at iteration ${iteration} and was re-seeded at row ${row + 1}${fromWorst ? ' (the worst-explained row)' : ' (a random row)'}`,
    );
  });
  if (!reseeded) return false;
  let total = 0;
  for (let c = 0; c < k; c++) total += model.weights[c];
  for (let c = 0; c < k; c++) model.weights[c] /= total;
  model.precisionCholesky = factorWithRidge(model.covariances, k, d, covarianceEstimators[covarianceType].shared, model.regularization).precisionCholesky;
  return true;
}

/**
 * Whether EM has converged, given the last two gains of the mean log-likelihood (`previousGain`
 * NaN when there is none). The step's gain must be below tol, and so must the step's gain plus
 * the gain still to come as Aitken's acceleration projects it from the last two steps, gain /
 * (1 − ratio) for gains that shrink by `ratio` a step (Böhning, Dietz, Schaub, Schlattmann &
 * Lindsay 1994, Ann. Inst. Statist. Math. 46, 373–388; McNicholas, Murphy, McDaid & Frost 2010,
 * Comput. Stat. Data Anal. 54, 711–723; cited from memory). Why: EM creeping along a ridge gains
 * less than tol a step yet far more in total, and a fit stopped there compares badly with its
 * neighbours under BIC (README, "Starts and convergence"). A growing gain is not converged; a flat
 * or falling step (no ratio to project with) stops on the step alone, as a plain step rule would.
 */
export function climbHasConverged(gain: number, previousGain: number, tol: number): boolean {
  if (!(Math.abs(gain) < tol)) return false;
  if (!(gain > 0 && previousGain > 0)) return true;
  const ratio = gain / previousGain;
  if (ratio >= 1) return false;
  return gain / (1 - ratio) < tol;
}

/** An E-step the EM loop asks for: on `model`, adding into `statistics` (null: log-likelihood only). */
export interface ExpectationRequest {
  model: MixtureModel;
  statistics: SufficientStatistics | null;
}

/**
 * One restart of EM as a generator that yields each E-step it needs and receives its summary,
 * so one loop serves both the single-thread fit and the fit whose E-steps are split over
 * worker threads. Initial hard assignment → M-step, then E-step/M-step pairs until the climb has
 * converged (climbHasConverged: the step's gain of the mean log-likelihood and the gain projected
 * still to come both below tol; the M-step after the last E-step is kept, as scikit-learn's
 * GaussianMixture does) or maxIterations; finally the log-likelihood of the returned parameters.
 */
export function* restartSteps(
  context: FitContext,
  options: ResolvedFitOptions,
  restart: number,
  signal?: AbortSignal,
  onProgress?: (progress: FitProgress) => void,
): Generator<ExpectationRequest, RestartOutcome, ExpectationSummary> {
  const { rows: n, cols: d } = context;
  const { components: k, covarianceType, tol, maxIterations, regularization } = options;
  const diagonalOnly = context.patterns === null && covarianceEstimators[covarianceType].moments === 'diagonal';
  const random = restartStream(options.seed, 2 * restart + 1); // for re-seeding; stream 2r starts the restart
  const warnings = new WarningLog();
  const report = (iteration: number, logLikelihood: number) => onProgress?.({ k, covarianceType, restart, iteration, logLikelihood });

  throwIfAborted(signal);
  report(0, NaN);
  const start = startMethodOf(options.init, restart);
  const labels = startingLabels(context, options, restart, start);
  let outcome = maximizationStep(statisticsFromLabels(context.filledValues, n, d, labels, k, diagonalOnly), covarianceType, regularization);
  noteMaximization(outcome, 0, warnings);
  let model = outcome.model;
  const reseeds = new Int32Array(k);
  if (outcome.emptied.length > 0) reseedEmptied(model, outcome.emptied, -1, context, random, 0, warnings, reseeds);

  let previous = -Infinity;
  let previousGain = NaN;
  let converged = false;
  let iterations = 0;
  for (let iteration = 1; iteration <= maxIterations; iteration++) {
    throwIfAborted(signal);
    const statistics = emptyStatistics(k, d, diagonalOnly, model.means);
    const summary: ExpectationSummary = yield { model, statistics };
    const meanLogLikelihood = summary.logLikelihood / n;
    outcome = maximizationStep(statistics, covarianceType, regularization);
    noteMaximization(outcome, iteration, warnings);
    model = outcome.model;
    iterations = iteration;
    report(iteration, meanLogLikelihood);
    if (outcome.emptied.length > 0 && reseedEmptied(model, outcome.emptied, summary.worstRow, context, random, iteration, warnings, reseeds)) {
      previous = -Infinity; // the re-seeded model starts a new climb
      previousGain = NaN;
      continue;
    }
    const gain = meanLogLikelihood - previous;
    if (climbHasConverged(gain, previousGain, tol)) {
      converged = true;
      break;
    }
    previous = meanLogLikelihood;
    previousGain = gain;
  }
  throwIfAborted(signal);
  const final: ExpectationSummary = yield { model, statistics: null };
  return {
    restart,
    model,
    logLikelihood: final.logLikelihood,
    sumLogMaxPosterior: final.sumLogMaxPosterior,
    converged,
    iterations,
    warnings: warnings.list(),
    start,
    refused: refusalOf(model, n, dataScale(context), outcome.regularised),
  };
}

/** One restart of EM on this thread. */
export function fitRestart(
  context: FitContext,
  options: ResolvedFitOptions,
  restart: number,
  signal?: AbortSignal,
  onProgress?: (progress: FitProgress) => void,
): RestartOutcome {
  const steps = restartSteps(context, options, restart, signal, onProgress);
  let step = steps.next();
  while (!step.done) step = steps.next(runExpectation(context, step.value.model, step.value.statistics));
  return step.value;
}

/**
 * The best restart turned into a FitResult: the highest log-likelihood among the valid restarts
 * (the earliest on ties), or among all of them when none is valid (the result is then refused).
 */
export function summarizeRestarts(outcomes: RestartOutcome[], options: ResolvedFitOptions, rows: number, cols: number): FitResult {
  const ordered = [...outcomes].sort((a, b) => a.restart - b.restart);
  const valid = ordered.filter((outcome) => outcome.refused === null);
  const candidates = valid.length > 0 ? valid : ordered;
  let best = candidates[0];
  for (const outcome of candidates) if (outcome.logLikelihood > best.logLikelihood) best = outcome;
  const parameters = parameterCount(options.components, cols, options.covarianceType);
  const bic = bayesianInformationCriterion(best.logLikelihood, parameters, rows);
  return {
    model: best.model,
    logLikelihood: best.logLikelihood,
    meanLogLikelihood: best.logLikelihood / rows,
    bic,
    aic: akaikeInformationCriterion(best.logLikelihood, parameters),
    icl: integratedCompletedLikelihood(bic, best.sumLogMaxPosterior),
    parameterCount: parameters,
    refused: best.refused,
    converged: best.converged,
    iterations: best.iterations,
    warnings: best.warnings,
    restartLogLikelihoods: ordered.map((outcome) => outcome.logLikelihood),
    restartStarts: ordered.map((outcome) => outcome.start),
    restartRefusals: ordered.map((outcome) => outcome.refused),
    bestRestart: best.restart,
  };
}

/** The sweep-table row of a fit. */
export function sweepRowOf(fit: FitResult): SweepRow {
  return {
    k: fit.model.components,
    covariance: fit.model.covarianceType,
    logLikelihood: fit.logLikelihood,
    bic: fit.bic,
    aic: fit.aic,
    icl: fit.icl,
    converged: fit.converged,
    iterations: fit.iterations,
    parameterCount: fit.parameterCount,
    warnings: fit.warnings,
    refused: fit.refused,
  };
}

/** Validates and prepares a fit; shared by the single-thread and the worker paths. */
export function prepareFit(data: DataMatrix, options: FitOptions): { resolved: ResolvedFitOptions; context: FitContext } {
  const resolved = resolveFitOptions(options);
  const anyMissing = validateFitInput(data, resolved);
  return { resolved, context: prepareFitContext(data, anyMissing) };
}

/** Fits a Gaussian mixture by EM on this thread: every restart in turn, the best kept. */
export function fitMixture(data: DataMatrix, options: FitOptions): FitResult {
  const { resolved, context } = prepareFit(data, options);
  const outcomes: RestartOutcome[] = [];
  for (let restart = 0; restart < resolved.restarts; restart++) {
    outcomes.push(fitRestart(context, resolved, restart, options.signal, options.onProgress));
  }
  return summarizeRestarts(outcomes, resolved, data.rows, data.cols);
}
