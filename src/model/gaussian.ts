/**
 * The engine's one home of the Gaussian numerics: LOG_2PI, log-sum-exp, the Cholesky factor and
 * the ridge that keeps it positive definite, component and marginal log densities, symmetric
 * eigenvalues, and one small covariance estimator per structure chosen from a table (the split
 * scikit-learn's GaussianMixture uses, from memory of sklearn/mixture/_gaussian_mixture.py).
 *
 * Shapes, all row-major Float64Arrays:
 * - a d × d matrix at `offset`: element (i, j) at offset + i·d + j;
 * - covariances and precision factors of k components: k × d × d;
 * - means: k × d; masses (Σᵢ τ_ic, the effective members): k.
 * The E-step's row loop is generated per dimension in kernel.ts for speed; its plain reference
 * (missing.ts) and every other caller use the functions here.
 */
import { EigenvalueDecomposition, Matrix } from 'ml-matrix';
import type { SufficientStatistics } from './estep.js';
import type { CovarianceType, MixtureModel } from './types.js';

export const LOG_2PI = Math.log(2 * Math.PI);

// ---------------------------------------------------------------------------------------------
// log-sum-exp

/**
 * Turns the log weights values[offset … offset + count) into weights summing to 1, in place, and
 * returns log Σ exp(values) (the largest is subtracted first so nothing overflows; its own exp is
 * exactly 1).
 */
export function normalizeLogWeights(values: Float64Array, offset: number, count: number): number {
  let best = -Infinity;
  let top = offset;
  for (let c = offset; c < offset + count; c++) {
    if (values[c] > best) {
      best = values[c];
      top = c;
    }
  }
  let total = 0;
  for (let c = offset; c < offset + count; c++) {
    const scaled = c === top ? 1 : Math.exp(values[c] - best);
    values[c] = scaled;
    total += scaled;
  }
  for (let c = offset; c < offset + count; c++) values[c] /= total;
  return best + Math.log(total);
}

// ---------------------------------------------------------------------------------------------
// Cholesky and the ridge

/**
 * Overwrites the symmetric d × d matrix at `offset` with its lower-triangular Cholesky factor L
 * (upper triangle zeroed), reading only the lower triangle, as LAPACK's dpotrf does, so a matrix
 * symmetric only to rounding still factors. Returns false (the contents are then undefined) when
 * the matrix is not positive definite. Row-by-row (Cholesky–Banachiewicz), the order of
 * ml-matrix's CholeskyDecomposition, so both give the same bits.
 */
export function choleskyInPlace(matrix: Float64Array, offset: number, d: number): boolean {
  for (let j = 0; j < d; j++) {
    const rowJ = offset + j * d;
    let sum = 0;
    for (let k = 0; k < j; k++) {
      const rowK = offset + k * d;
      let s = 0;
      for (let i = 0; i < k; i++) s += matrix[rowK + i] * matrix[rowJ + i];
      s = (matrix[rowJ + k] - s) / matrix[rowK + k];
      matrix[rowJ + k] = s;
      sum += s * s;
    }
    const pivot = matrix[rowJ + j] - sum;
    if (!(pivot > 0)) return false; // also NaN
    matrix[rowJ + j] = Math.sqrt(pivot);
    for (let k = j + 1; k < d; k++) matrix[rowJ + k] = 0;
  }
  return true;
}

/** The Cholesky factor L of the d × d matrix at `offset` as a new array, or null when it is not positive definite. */
export function choleskyLower(source: Float64Array, offset: number, d: number): Float64Array | null {
  const lower = source.slice(offset, offset + d * d);
  return choleskyInPlace(lower, 0, d) ? lower : null;
}

/** Inverse of a lower-triangular d × d matrix, itself lower triangular. */
export function invertLowerTriangular(lower: Float64Array, d: number): Float64Array {
  const inverse = new Float64Array(d * d);
  for (let column = 0; column < d; column++) {
    // Solve L y = e_column by forward substitution; y is column `column` of L⁻¹.
    for (let i = column; i < d; i++) {
      let sum = i === column ? 1 : 0;
      for (let j = column; j < i; j++) sum -= lower[i * d + j] * inverse[j * d + column];
      inverse[i * d + column] = sum / lower[i * d + i];
    }
  }
  return inverse;
}

/** Σ log F_ii of a triangular d × d factor at `offset`: ½ log|Σ| for F = L, −½ log|Σ| for W = L⁻¹. */
export function logDiagonalSum(factor: Float64Array, offset: number, d: number): number {
  let sum = 0;
  for (let i = 0; i < d; i++) sum += Math.log(factor[offset + i * d + i]);
  return sum;
}

/** Solves L z = b in place (b becomes z) for the lower-triangular d × d factor at `offset`. */
export function solveLowerInPlace(lower: Float64Array, offset: number, vector: Float64Array, d: number): void {
  for (let i = 0; i < d; i++) {
    let value = vector[i];
    for (let j = 0; j < i; j++) value -= lower[offset + i * d + j] * vector[j];
    vector[i] = value / lower[offset + i * d + i];
  }
}

/**
 * Precision factors W_c = L_c⁻¹ of k covariances (k × d × d each way): W_c Σ_c W_cᵀ = I, so
 * (x − μ)ᵀ Σ_c⁻¹ (x − μ) = ‖W_c (x − μ)‖². Throws when one is not positive definite (a fitted
 * model always is, so this means a corrupt one).
 */
export function precisionCholeskyOf(covariances: Float64Array, k: number, d: number): Float64Array {
  const result = new Float64Array(k * d * d);
  for (let c = 0; c < k; c++) {
    const lower = choleskyLower(covariances, c * d * d, d);
    if (!lower) throw new Error(`Covariance matrix of component ${c + 1} is not positive definite.`);
    result.set(invertLowerTriangular(lower, d), c * d * d);
  }
  return result;
}

/** A covariance that needed more than the requested ridge to factor, and how much was added in all. */
export interface RaisedRidge {
  component: number;
  added: number;
}

/**
 * Precision factors of k covariances that already carry the requested ridge on their diagonals.
 * A covariance still not positive definite gets a larger ridge — ten times the request, or
 * 1e-10 of its mean variance, growing tenfold — until it factors; it is modified in place and
 * listed in `raised`. With `shared` (tied) the first covariance is factored once and copied.
 */
export function factorWithRidge(
  covariances: Float64Array,
  k: number,
  d: number,
  shared: boolean,
  ridge: number,
): { precisionCholesky: Float64Array; raised: RaisedRidge[] } {
  const dd = d * d;
  const precisionCholesky = new Float64Array(k * dd);
  const raised: RaisedRidge[] = [];
  for (let c = 0; c < (shared ? 1 : k); c++) {
    let lower = choleskyLower(covariances, c * dd, d);
    let added = 0;
    let step = Math.max(ridge * 10, 1e-10 * Math.max(1e-300, absoluteTrace(covariances, c * dd, d) / d));
    while (!lower) {
      for (let a = 0; a < d; a++) covariances[c * dd + a * d + a] += step - added;
      added = step;
      step *= 10;
      lower = choleskyLower(covariances, c * dd, d);
      if (!Number.isFinite(step)) throw new Error('Covariance could not be regularised to positive definite.');
    }
    if (added > 0) raised.push({ component: c, added });
    precisionCholesky.set(invertLowerTriangular(lower, d), c * dd);
  }
  if (shared) {
    for (let c = 1; c < k; c++) {
      covariances.copyWithin(c * dd, 0, dd);
      precisionCholesky.copyWithin(c * dd, 0, dd);
    }
  }
  return { precisionCholesky, raised };
}

function absoluteTrace(matrix: Float64Array, offset: number, d: number): number {
  let sum = 0;
  for (let a = 0; a < d; a++) sum += Math.abs(matrix[offset + a * d + a]);
  return sum;
}

// ---------------------------------------------------------------------------------------------
// densities

/** ‖W e‖² for the lower-triangular d × d factor W at `offset` and a deviation e (d). */
export function whitenedSquaredNorm(factor: Float64Array, offset: number, deviation: ArrayLike<number>, d: number): number {
  let squared = 0;
  for (let i = 0; i < d; i++) {
    let sum = 0;
    for (let j = 0; j <= i; j++) sum += factor[offset + i * d + j] * deviation[j];
    squared += sum * sum;
  }
  return squared;
}

/** The row-independent part of log w N(x | μ, Σ): log w + Σ log W_ii − (d/2) log 2π, for W = L⁻¹ at `offset`. */
export function logDensityConstant(logWeight: number, precisionFactor: Float64Array, offset: number, d: number): number {
  return logWeight + logDiagonalSum(precisionFactor, offset, d) - 0.5 * d * LOG_2PI;
}

/** log N(x | μ_c, Σ_c) of one component of a model at a full row x (d values). */
export function componentLogDensity(model: MixtureModel, component: number, x: ArrayLike<number>): number {
  const d = model.dimensions;
  const deviation = new Float64Array(d);
  for (let a = 0; a < d; a++) deviation[a] = x[a] - model.means[component * d + a];
  const offset = component * d * d;
  return logDensityConstant(0, model.precisionCholesky, offset, d) - 0.5 * whitenedSquaredNorm(model.precisionCholesky, offset, deviation, d);
}

/**
 * The precision factor (|S| × |S|, lower triangular, W Σ_SS Wᵀ = I) of the sub-covariance of the
 * features S (0-based, any order) of the d × d covariance at `offset`; null when Σ_SS is not
 * positive definite.
 */
export function marginalPrecisionFactor(covariances: Float64Array, offset: number, d: number, features: ArrayLike<number>): Float64Array | null {
  const m = features.length;
  const block = new Float64Array(m * m);
  for (let i = 0; i < m; i++) for (let j = 0; j < m; j++) block[i * m + j] = covariances[offset + features[i] * d + features[j]];
  return choleskyInPlace(block, 0, m) ? invertLowerTriangular(block, m) : null;
}

/**
 * log N(x_S | μ_S, Σ_SS) of one component on the features S (the marginal Gaussian of those
 * features; 0 when S is empty, −Infinity when Σ_SS is singular).
 */
export function marginalLogDensity(model: MixtureModel, component: number, x: ArrayLike<number>, features: ArrayLike<number>): number {
  const m = features.length;
  if (m === 0) return 0;
  const d = model.dimensions;
  const factor = marginalPrecisionFactor(model.covariances, component * d * d, d, features);
  if (!factor) return -Infinity;
  const deviation = new Float64Array(m);
  for (let i = 0; i < m; i++) deviation[i] = x[features[i]] - model.means[component * d + features[i]];
  return logDensityConstant(0, factor, 0, m) - 0.5 * whitenedSquaredNorm(factor, 0, deviation, m);
}

/** Covariance (d × d, symmetric, denominator n) of the n × d rows. */
export function rowCovariance(values: Float64Array, n: number, d: number): Float64Array {
  const mean = new Float64Array(d);
  for (let row = 0; row < n; row++) for (let a = 0; a < d; a++) mean[a] += values[row * d + a] / n;
  const covariance = new Float64Array(d * d);
  for (let row = 0; row < n; row++) {
    for (let a = 0; a < d; a++) {
      const differenceA = values[row * d + a] - mean[a];
      for (let b = 0; b <= a; b++) covariance[a * d + b] += (differenceA * (values[row * d + b] - mean[b])) / n;
    }
  }
  for (let a = 0; a < d; a++) for (let b = a + 1; b < d; b++) covariance[a * d + b] = covariance[b * d + a];
  return covariance;
}

// ---------------------------------------------------------------------------------------------
// symmetric eigenvalues

/** Eigenvalues (ascending) and eigenvectors (column j of the d × d row-major `vectors` belongs to value j) of a symmetric matrix. */
export function symmetricEigen(matrix: Float64Array, offset: number, d: number): { values: Float64Array; vectors: Float64Array } {
  const rows: number[][] = [];
  for (let i = 0; i < d; i++) {
    const row: number[] = [];
    for (let j = 0; j < d; j++) row.push(i >= j ? matrix[offset + i * d + j] : matrix[offset + j * d + i]);
    rows.push(row);
  }
  const decomposition = new EigenvalueDecomposition(new Matrix(rows), { assumeSymmetric: true });
  const order = decomposition.realEigenvalues.map((value, index) => ({ value, index })).sort((a, b) => a.value - b.value);
  const values = Float64Array.from(order.map((entry) => entry.value));
  const vectors = new Float64Array(d * d);
  const source = decomposition.eigenvectorMatrix;
  order.forEach(({ index }, column) => {
    for (let i = 0; i < d; i++) vectors[i * d + column] = source.get(i, index);
  });
  return { values, vectors };
}

// ---------------------------------------------------------------------------------------------
// one estimator per covariance structure

/**
 * How one covariance structure is estimated and counted.
 * - moments: which second moments the E-step accumulates ('diagonal': only Σ_c's diagonal).
 * - triangular: the E-step uses lower-triangular precision factors (otherwise per-feature
 *   inverse standard deviations, the factors' diagonals).
 * - shared: one covariance for all components (factored once).
 * - parameters(k, d): free covariance parameters (as scikit-learn's _n_parameters counts them).
 * - minimumMembers(d): effective members (Σᵢ τ_ic) a component needs to estimate what the
 *   structure gives it; fewer and the fit is refused for model choice (validity.ts).
 * - estimate(scatter, masses, k, d): turns per-component scatter S_c = Σᵢ τ_ic (x_i − μ_c)(x_i −
 *   μ_c)ᵀ / N_c (k × d × d; the lower triangle, or the diagonal when moments are 'diagonal')
 *   into the structure's k × d × d covariances, in place, before the ridge.
 */
export interface CovarianceEstimator {
  moments: 'diagonal' | 'full';
  triangular: boolean;
  shared: boolean;
  parameters(k: number, d: number): number;
  minimumMembers(d: number): number;
  estimate(scatter: Float64Array, masses: Float64Array, k: number, d: number): void;
}

const triangle = (d: number) => (d * (d + 1)) / 2;

function mirrorLowerTriangles(scatter: Float64Array, k: number, d: number): void {
  for (let c = 0; c < k; c++) {
    for (let a = 0; a < d; a++) for (let b = 0; b < a; b++) scatter[c * d * d + b * d + a] = scatter[c * d * d + a * d + b];
  }
}

export const covarianceEstimators: Readonly<Record<CovarianceType, CovarianceEstimator>> = {
  full: {
    moments: 'full',
    triangular: true,
    shared: false,
    parameters: (k, d) => k * triangle(d),
    minimumMembers: (d) => d + 1,
    estimate: (scatter, _masses, k, d) => mirrorLowerTriangles(scatter, k, d),
  },
  diag: {
    moments: 'diagonal',
    triangular: false,
    shared: false,
    parameters: (k, d) => k * d,
    minimumMembers: () => 2,
    estimate: () => {}, // the diagonal is the estimate; off-diagonals stay 0
  },
  spherical: {
    moments: 'diagonal',
    triangular: false,
    shared: false,
    parameters: (k) => k,
    minimumMembers: () => 2,
    estimate: (scatter, _masses, k, d) => {
      for (let c = 0; c < k; c++) {
        let sum = 0;
        for (let a = 0; a < d; a++) sum += scatter[c * d * d + a * d + a];
        for (let a = 0; a < d; a++) scatter[c * d * d + a * d + a] = sum / d;
      }
    },
  },
  tied: {
    moments: 'full',
    triangular: true,
    shared: true,
    parameters: (_k, d) => triangle(d),
    // The shared covariance is pooled over all rows (n − k ≥ d is checked before fitting), so a
    // component cannot collapse onto a point: it needs mass only for its mean.
    minimumMembers: () => 1,
    estimate: (scatter, masses, k, d) => {
      mirrorLowerTriangles(scatter, k, d);
      const dd = d * d;
      let totalMass = 0;
      for (let c = 0; c < k; c++) totalMass += masses[c];
      const pooled = new Float64Array(dd);
      for (let c = 0; c < k; c++) for (let i = 0; i < dd; i++) pooled[i] += (scatter[c * dd + i] * masses[c]) / totalMass;
      for (let c = 0; c < k; c++) scatter.set(pooled, c * dd);
    },
  },
};

/**
 * Per-component scatter S_c (k × d × d) from sufficient statistics shifted by centers c_c:
 * S_c = S2_c / N_c − m mᵀ with m = S1_c / N_c (the lower triangle, or the diagonal only).
 */
export function scatterFromStatistics(statistics: SufficientStatistics, masses: Float64Array, moments: 'diagonal' | 'full'): Float64Array {
  const { components: k, dimensions: d, firstMoments, secondMoments } = statistics;
  const dd = d * d;
  const scatter = new Float64Array(k * dd);
  for (let c = 0; c < k; c++) {
    const mass = masses[c];
    for (let a = 0; a < d; a++) {
      const shiftA = firstMoments[c * d + a] / mass;
      for (let b = moments === 'full' ? 0 : a; b <= a; b++) {
        const shiftB = firstMoments[c * d + b] / mass;
        scatter[c * dd + a * d + b] = secondMoments[c * dd + a * d + b] / mass - shiftA * shiftB;
      }
    }
  }
  return scatter;
}
