import { covarianceEstimators } from './gaussian.js';
import type { CovarianceType } from './types.js';

/**
 * Free parameters of a k-component mixture in d dimensions, counted exactly as scikit-learn's
 * GaussianMixture._n_parameters does (from memory of sklearn/mixture/_gaussian_mixture.py):
 * the structure's covariance parameters (full k·d(d+1)/2, diag k·d, tied d(d+1)/2, spherical k)
 * + k·d means + (k − 1) weights.
 */
export function parameterCount(k: number, d: number, covarianceType: CovarianceType): number {
  return covarianceEstimators[covarianceType].parameters(k, d) + k * d + (k - 1);
}

/** BIC = −2 log L + p ln n (Schwarz 1978; lower is better). */
export function bayesianInformationCriterion(logLikelihood: number, parameters: number, rows: number): number {
  return -2 * logLikelihood + parameters * Math.log(rows);
}

/** AIC = −2 log L + 2p (Akaike 1974; lower is better). */
export function akaikeInformationCriterion(logLikelihood: number, parameters: number): number {
  return -2 * logLikelihood + 2 * parameters;
}

/**
 * ICL = BIC − 2 Σᵢ log z_i,MAP (Biernacki, Celeux & Govaert 2000, in the BIC approximation):
 * `sumLogMaxPosterior` is Σᵢ log max_k τ_ik, which is ≤ 0, so ICL ≥ BIC.
 */
export function integratedCompletedLikelihood(bic: number, sumLogMaxPosterior: number): number {
  return bic - 2 * sumLogMaxPosterior;
}
