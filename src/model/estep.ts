import { covarianceEstimators, logDensityConstant } from './gaussian.js';
import { expectationKernel, type StatisticsMode } from './kernel.js';
import type { MixtureModel } from './types.js';

/**
 * What the E-step needs from a model, laid out for the row loop.
 * - triangular: full and tied models use lower-triangular factors (k × d × d, row-major W_c);
 *   diag and spherical use per-feature inverse standard deviations (k × d).
 * - logConstants: k, log w_c + Σ log diag W_c − (d/2) log 2π.
 * - means: k × d.
 */
export interface ExpectationTerms {
  components: number;
  dimensions: number;
  triangular: boolean;
  logConstants: Float64Array;
  means: Float64Array;
  factors: Float64Array;
}

/**
 * Sufficient statistics of the responsibilities τ (shifted by each component's current mean c_c
 * so that the one-pass sums do not cancel catastrophically):
 * - weightSums: k, N_c = Σᵢ τ_ic
 * - firstMoments: k × d, Σᵢ τ_ic (x_i − c_c)
 * - secondMoments: k × d × d, Σᵢ τ_ic (x_i − c_c)(x_i − c_c)ᵀ, lower triangle only (diagonal
 *   only when `diagonalOnly`)
 * - centers: k × d, the shifts c_c
 */
export interface SufficientStatistics {
  components: number;
  dimensions: number;
  diagonalOnly: boolean;
  weightSums: Float64Array;
  firstMoments: Float64Array;
  secondMoments: Float64Array;
  centers: Float64Array;
}

/** Totals of one E-step pass. */
export interface ExpectationSummary {
  /** Σᵢ log p(x_i). */
  logLikelihood: number;
  /** Σᵢ log max_c τ_ic, for ICL. */
  sumLogMaxPosterior: number;
  /** Row with the lowest log density (the worst-explained row) and that density. */
  worstRow: number;
  worstLogDensity: number;
}

export function expectationTerms(model: MixtureModel): ExpectationTerms {
  const { components: k, dimensions: d } = model;
  const { triangular } = covarianceEstimators[model.covarianceType];
  const logConstants = new Float64Array(k);
  const factors = new Float64Array(triangular ? k * d * d : k * d);
  for (let c = 0; c < k; c++) {
    const offset = c * d * d;
    logConstants[c] = logDensityConstant(Math.log(model.weights[c]), model.precisionCholesky, offset, d);
    if (triangular) factors.set(model.precisionCholesky.subarray(offset, offset + d * d), offset);
    else for (let j = 0; j < d; j++) factors[c * d + j] = model.precisionCholesky[offset + j * d + j];
  }
  return { components: k, dimensions: d, triangular, logConstants, means: model.means, factors };
}

export function emptyStatistics(k: number, d: number, diagonalOnly: boolean, centers: Float64Array): SufficientStatistics {
  return {
    components: k,
    dimensions: d,
    diagonalOnly,
    weightSums: new Float64Array(k),
    firstMoments: new Float64Array(k * d),
    secondMoments: new Float64Array(k * d * d),
    centers: Float64Array.from(centers),
  };
}

/**
 * Rows per chunk: E-step statistics are summed per chunk and chunks are added in order, so the
 * result has the same bits however the chunks are spread over threads.
 */
export const CHUNK_ROWS = 65_536;

/**
 * Per-chunk partial results of an E-step over chunks [firstChunk, firstChunk + count):
 * weightSums count × k, firstMoments count × k × d, secondMoments count × k × d × d,
 * summaries count × 4 (Σ log density, Σ log max posterior, worst row, worst log density).
 */
export interface ChunkPartials {
  firstChunk: number;
  count: number;
  weightSums: Float64Array;
  firstMoments: Float64Array;
  secondMoments: Float64Array;
  summaries: Float64Array;
}

/**
 * E-step over the complete rows of chunks [firstChunk, lastChunk) of the n × d row-major
 * `values`: per row the component log densities log w_c + log N(x | μ_c, Σ_c) via
 * ‖W_c (x − μ_c)‖², their log-sum-exp (the row's log density) and responsibilities τ_ic, and in
 * the same pass the M-step statistics of each chunk (statistics 'none' skips them) and the
 * posteriors (n × k at each row's own offset, when given).
 */
export function expectationChunks(
  values: Float64Array,
  rows: number,
  terms: ExpectationTerms,
  statistics: StatisticsMode,
  firstChunk: number,
  lastChunk: number,
  posteriors: Float64Array | null,
): ChunkPartials {
  const { components: k, dimensions: d } = terms;
  const count = lastChunk - firstChunk;
  const withStatistics = statistics !== 'none';
  const partials: ChunkPartials = {
    firstChunk,
    count,
    weightSums: new Float64Array(withStatistics ? count * k : 0),
    firstMoments: new Float64Array(withStatistics ? count * k * d : 0),
    secondMoments: new Float64Array(withStatistics ? count * k * d * d : 0),
    summaries: new Float64Array(count * 4),
  };
  const kernel = expectationKernel({ dimensions: d, triangular: terms.triangular, statistics, posteriors: posteriors !== null });
  for (let index = 0; index < count; index++) {
    const chunk = firstChunk + index;
    kernel(
      values,
      chunk * CHUNK_ROWS,
      Math.min((chunk + 1) * CHUNK_ROWS, rows),
      k,
      terms.logConstants,
      terms.means,
      terms.factors,
      withStatistics ? partials.weightSums.subarray(index * k, (index + 1) * k) : noArray,
      withStatistics ? partials.firstMoments.subarray(index * k * d, (index + 1) * k * d) : noArray,
      withStatistics ? partials.secondMoments.subarray(index * k * d * d, (index + 1) * k * d * d) : noArray,
      posteriors ?? noArray,
      partials.summaries.subarray(index * 4, index * 4 + 4),
    );
  }
  return partials;
}

export function chunkCount(rows: number): number {
  return Math.ceil(rows / CHUNK_ROWS);
}

/**
 * Adds chunk partials (given in any grouping, combined in chunk order) into `statistics` (when
 * given) and returns the summed summary: the same bits for any split of the chunks.
 */
export function combineChunks(parts: readonly ChunkPartials[], statistics: SufficientStatistics | null): ExpectationSummary {
  const ordered = [...parts].sort((a, b) => a.firstChunk - b.firstChunk);
  let logLikelihood = 0;
  let sumLogMaxPosterior = 0;
  let worstRow = -1;
  let worstLogDensity = Infinity;
  for (const part of ordered) {
    for (let index = 0; index < part.count; index++) {
      if (statistics) {
        const { components: k, dimensions: d } = statistics;
        addRange(statistics.weightSums, part.weightSums, index * k);
        addRange(statistics.firstMoments, part.firstMoments, index * k * d);
        addRange(statistics.secondMoments, part.secondMoments, index * k * d * d);
      }
      logLikelihood += part.summaries[index * 4];
      sumLogMaxPosterior += part.summaries[index * 4 + 1];
      if (part.summaries[index * 4 + 3] < worstLogDensity) {
        worstLogDensity = part.summaries[index * 4 + 3];
        worstRow = part.summaries[index * 4 + 2];
      }
    }
  }
  return { logLikelihood, sumLogMaxPosterior, worstRow, worstLogDensity };
}

function addRange(target: Float64Array, source: Float64Array, offset: number): void {
  for (let i = 0; i < target.length; i++) target[i] += source[offset + i];
}

/** Statistics mode the fast kernel needs for a structure. */
export function statisticsModeOf(statistics: SufficientStatistics | null): StatisticsMode {
  return !statistics ? 'none' : statistics.diagonalOnly ? 'diagonal' : 'full';
}

/** The E-step over all complete rows on this thread (see expectationChunks). */
export function expectationStep(
  values: Float64Array,
  rows: number,
  terms: ExpectationTerms,
  statistics: SufficientStatistics | null,
  posteriors: Float64Array | null,
): ExpectationSummary {
  const partials = expectationChunks(values, rows, terms, statisticsModeOf(statistics), 0, chunkCount(rows), posteriors);
  return combineChunks([partials], statistics);
}

const noArray = new Float64Array(0);
