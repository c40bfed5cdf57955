import { choleskyLower, invertLowerTriangular } from './linalg.js';
import type { SufficientStatistics } from './estep.js';
import type { CovarianceType, MixtureModel } from './types.js';

/** Responsibility mass below which a component counts as emptied (less than one row's worth). */
export const EMPTY_COMPONENT_MASS = 1;

/** scikit-learn adds 10·eps to every component's mass so no weight or mean divides by zero. */
const MASS_FLOOR = 10 * Number.EPSILON;

export interface MaximizationOutcome {
  model: MixtureModel;
  /** 0-based components whose responsibility mass fell below EMPTY_COMPONENT_MASS. */
  emptied: number[];
  /** Components whose covariance was not positive definite with the requested regularisation, and the diagonal added instead. */
  regularised: { component: number; added: number }[];
}

/**
 * M-step: weights, means and covariances of the given structure from sufficient statistics.
 * weights_c = N_c / Σ N, μ_c = c_c + S1_c / N_c, Σ_c = S2_c / N_c − m m ᵀ (m = S1_c / N_c) plus
 * `regularization` on the diagonal; diag keeps the diagonal, spherical its mean, tied pools
 * Σ_c N_c Σ_c / Σ N_c (as scikit-learn's _estimate_gaussian_covariances_* do, from memory).
 * A covariance that is still not positive definite gets ten times more on its diagonal until
 * it is, and is reported in `regularised`.
 */
export function maximizationStep(
  statistics: SufficientStatistics,
  covarianceType: CovarianceType,
  regularization: number,
): MaximizationOutcome {
  const { components: k, dimensions: d, weightSums, firstMoments, secondMoments, centers } = statistics;
  const dd = d * d;
  const weights = new Float64Array(k);
  const means = new Float64Array(k * d);
  const covariances = new Float64Array(k * dd);
  const emptied: number[] = [];
  let totalMass = 0;
  for (let c = 0; c < k; c++) {
    const mass = weightSums[c] + MASS_FLOOR;
    if (weightSums[c] < EMPTY_COMPONENT_MASS) emptied.push(c);
    weights[c] = mass;
    totalMass += mass;
    for (let a = 0; a < d; a++) means[c * d + a] = centers[c * d + a] + firstMoments[c * d + a] / mass;
    // Within-component scatter / mass, lower triangle then mirrored.
    for (let a = 0; a < d; a++) {
      const shiftA = firstMoments[c * d + a] / mass;
      for (let b = 0; b <= a; b++) {
        if (covarianceType !== 'full' && covarianceType !== 'tied' && a !== b) continue;
        const shiftB = firstMoments[c * d + b] / mass;
        const value = secondMoments[c * dd + a * d + b] / mass - shiftA * shiftB;
        covariances[c * dd + a * d + b] = value;
        covariances[c * dd + b * d + a] = value;
      }
    }
  }
  for (let c = 0; c < k; c++) weights[c] /= totalMass;

  if (covarianceType === 'tied') {
    const pooled = new Float64Array(dd);
    for (let c = 0; c < k; c++) {
      const mass = weightSums[c] + MASS_FLOOR;
      for (let i = 0; i < dd; i++) pooled[i] += (covariances[c * dd + i] * mass) / totalMass;
    }
    for (let c = 0; c < k; c++) covariances.set(pooled, c * dd);
  } else if (covarianceType === 'spherical') {
    for (let c = 0; c < k; c++) {
      let sum = 0;
      for (let a = 0; a < d; a++) sum += covariances[c * dd + a * d + a];
      for (let a = 0; a < d; a++) covariances[c * dd + a * d + a] = sum / d;
    }
  }
  for (let c = 0; c < k; c++) for (let a = 0; a < d; a++) covariances[c * dd + a * d + a] += regularization;

  const { precisionCholesky, regularised } = factorWithRegularisation(covariances, k, d, covarianceType, regularization);
  return {
    model: { covarianceType, components: k, dimensions: d, weights, means, covariances, precisionCholesky, regularization },
    emptied,
    regularised,
  };
}

/**
 * Precision Cholesky factors of k covariances (modified in place when one needs more on its
 * diagonal). Tied models factor once and share the factor so the components stay identical.
 */
export function factorWithRegularisation(
  covariances: Float64Array,
  k: number,
  d: number,
  covarianceType: CovarianceType,
  regularization: number,
): { precisionCholesky: Float64Array; regularised: { component: number; added: number }[] } {
  const dd = d * d;
  const precisionCholesky = new Float64Array(k * dd);
  const regularised: { component: number; added: number }[] = [];
  const distinct = covarianceType === 'tied' ? 1 : k;
  for (let c = 0; c < distinct; c++) {
    let lower = choleskyLower(covariances, c * dd, d);
    let added = 0;
    let step = Math.max(regularization * 10, 1e-10 * Math.max(1e-300, traceOf(covariances, c * dd, d) / d));
    while (!lower) {
      // Not positive definite: grow the ridge until the factor exists (bounded: the trace is finite).
      for (let a = 0; a < d; a++) covariances[c * dd + a * d + a] += step - added;
      added = step;
      step *= 10;
      lower = choleskyLower(covariances, c * dd, d);
      if (!Number.isFinite(step)) throw new Error('Covariance could not be regularised to positive definite.');
    }
    if (added > 0) regularised.push({ component: c, added });
    precisionCholesky.set(invertLowerTriangular(lower, d), c * dd);
  }
  if (covarianceType === 'tied') {
    for (let c = 1; c < k; c++) {
      covariances.copyWithin(c * dd, 0, dd);
      precisionCholesky.copyWithin(c * dd, 0, dd);
    }
  }
  return { precisionCholesky, regularised };
}

function traceOf(matrix: Float64Array, offset: number, d: number): number {
  let sum = 0;
  for (let a = 0; a < d; a++) sum += Math.abs(matrix[offset + a * d + a]);
  return sum;
}
