import { logDiagonalSum } from './linalg.js';
import type { MixtureModel } from './types.js';

const LOG_2PI = Math.log(2 * Math.PI);

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
  const triangular = model.covarianceType === 'full' || model.covarianceType === 'tied';
  const logConstants = new Float64Array(k);
  const factors = new Float64Array(triangular ? k * d * d : k * d);
  for (let c = 0; c < k; c++) {
    const offset = c * d * d;
    logConstants[c] = Math.log(model.weights[c]) + logDiagonalSum(model.precisionCholesky, offset, d) - 0.5 * d * LOG_2PI;
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
 * E-step over complete rows [rowStart, rowEnd) of the n × d row-major `values`: per row the
 * component log densities log w_c + log N(x | μ_c, Σ_c) via ‖W_c (x − μ_c)‖², their log-sum-exp
 * (the row's log density), the responsibilities τ_ic, and — in the same pass — the sufficient
 * statistics for the M-step (when `statistics` is given; its centers must equal terms.means) and
 * the posteriors (n × k, when `posteriors` is given, written at row i's own offset).
 */
export function expectationStep(
  values: Float64Array,
  rowStart: number,
  rowEnd: number,
  terms: ExpectationTerms,
  statistics: SufficientStatistics | null,
  posteriors: Float64Array | null,
): ExpectationSummary {
  const { components: k, dimensions: d, triangular, logConstants, means, factors } = terms;
  const differences = new Float64Array(k * d);
  const logDensities = new Float64Array(k);
  const weightSums = statistics?.weightSums;
  const firstMoments = statistics?.firstMoments;
  const secondMoments = statistics?.secondMoments;
  const diagonalOnly = statistics?.diagonalOnly ?? true;
  let logLikelihood = 0;
  let sumLogMaxPosterior = 0;
  let worstRow = -1;
  let worstLogDensity = Infinity;
  const dd = d * d;
  for (let row = rowStart; row < rowEnd; row++) {
    const base = row * d;
    let best = -Infinity;
    for (let c = 0; c < k; c++) {
      const meanOffset = c * d;
      let squared = 0;
      if (triangular) {
        const factorOffset = c * dd;
        for (let a = 0; a < d; a++) {
          const difference = values[base + a] - means[meanOffset + a];
          differences[meanOffset + a] = difference;
          let projected = 0;
          const rowOffset = factorOffset + a * d;
          for (let b = 0; b < a; b++) projected += factors[rowOffset + b] * differences[meanOffset + b];
          projected += factors[rowOffset + a] * difference;
          squared += projected * projected;
        }
      } else {
        for (let a = 0; a < d; a++) {
          const difference = values[base + a] - means[meanOffset + a];
          differences[meanOffset + a] = difference;
          const scaled = difference * factors[meanOffset + a];
          squared += scaled * scaled;
        }
      }
      const logDensity = logConstants[c] - 0.5 * squared;
      logDensities[c] = logDensity;
      if (logDensity > best) best = logDensity;
    }
    let total = 0;
    for (let c = 0; c < k; c++) {
      const scaled = Math.exp(logDensities[c] - best);
      logDensities[c] = scaled;
      total += scaled;
    }
    const logTotal = Math.log(total);
    const rowLogDensity = best + logTotal;
    logLikelihood += rowLogDensity;
    sumLogMaxPosterior -= logTotal; // the top component's scaled value is exactly 1
    if (rowLogDensity < worstLogDensity) {
      worstLogDensity = rowLogDensity;
      worstRow = row;
    }
    const inverseTotal = 1 / total;
    if (posteriors) for (let c = 0; c < k; c++) posteriors[row * k + c] = logDensities[c] * inverseTotal;
    if (weightSums && firstMoments && secondMoments) {
      for (let c = 0; c < k; c++) {
        const responsibility = logDensities[c] * inverseTotal;
        if (responsibility === 0) continue;
        weightSums[c] += responsibility;
        const meanOffset = c * d;
        const momentOffset = c * dd;
        for (let a = 0; a < d; a++) {
          const weighted = responsibility * differences[meanOffset + a];
          firstMoments[meanOffset + a] += weighted;
          if (diagonalOnly) {
            secondMoments[momentOffset + a * d + a] += weighted * differences[meanOffset + a];
          } else {
            const rowOffset = momentOffset + a * d;
            for (let b = 0; b <= a; b++) secondMoments[rowOffset + b] += weighted * differences[meanOffset + b];
          }
        }
      }
    }
  }
  return { logLikelihood, sumLogMaxPosterior, worstRow, worstLogDensity };
}

/** Adds `source` into `target` (same shape): used to combine statistics of row blocks in order. */
export function addStatistics(target: SufficientStatistics, source: SufficientStatistics): void {
  addInto(target.weightSums, source.weightSums);
  addInto(target.firstMoments, source.firstMoments);
  addInto(target.secondMoments, source.secondMoments);
}

function addInto(target: Float64Array, source: Float64Array): void {
  for (let i = 0; i < target.length; i++) target[i] += source[i];
}
