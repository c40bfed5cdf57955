import { covarianceEstimators, factorWithRidge, scatterFromStatistics, type RaisedRidge } from './gaussian.js';
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
  regularised: RaisedRidge[];
}

/**
 * M-step: weights_c = N_c / Σ N, μ_c = c_c + S1_c / N_c, and the covariances of the structure's
 * estimator (gaussian.ts) from the per-component scatter, plus `regularization` on the diagonal;
 * a covariance still not positive definite gets a larger ridge and is listed in `regularised`.
 */
export function maximizationStep(
  statistics: SufficientStatistics,
  covarianceType: CovarianceType,
  regularization: number,
): MaximizationOutcome {
  const { components: k, dimensions: d, weightSums, firstMoments, centers } = statistics;
  const estimator = covarianceEstimators[covarianceType];
  const masses = new Float64Array(k);
  const weights = new Float64Array(k);
  const means = new Float64Array(k * d);
  const emptied: number[] = [];
  let totalMass = 0;
  for (let c = 0; c < k; c++) {
    const mass = weightSums[c] + MASS_FLOOR;
    if (weightSums[c] < EMPTY_COMPONENT_MASS) emptied.push(c);
    masses[c] = mass;
    totalMass += mass;
    for (let a = 0; a < d; a++) means[c * d + a] = centers[c * d + a] + firstMoments[c * d + a] / mass;
  }
  for (let c = 0; c < k; c++) weights[c] = masses[c] / totalMass;
  const covariances = scatterFromStatistics(statistics, masses, estimator.moments);
  estimator.estimate(covariances, masses, k, d);
  for (let c = 0; c < k; c++) for (let a = 0; a < d; a++) covariances[c * d * d + a * d + a] += regularization;
  const { precisionCholesky, raised } = factorWithRidge(covariances, k, d, estimator.shared, regularization);
  return {
    model: { covarianceType, components: k, dimensions: d, weights, means, covariances, precisionCholesky, regularization },
    emptied,
    regularised: raised,
  };
}
