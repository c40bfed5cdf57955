/**
 * Checks a run's feature set in the transformed space before fitting (DESIGN.md §4): features that
 * are the same for every customer, or exactly collinear (one a linear function of the others), are
 * refused with their names — the mixture cannot use them and nothing is stored; a nearly collinear
 * set, where one feature is explained by the others with R² ≥ 0.95, gets a warning stored with
 * the run that names the feature to drop.
 *
 * R²_j of feature j regressed on the others is 1 − 1 / (R⁻¹)_jj for the correlation matrix R of
 * the features (a standard identity of least squares, from memory); exact collinearity is a
 * (numerically) zero eigenvalue of R, and the features with weight in its eigenvector are the
 * ones involved. Rows with a missing value are left out of the check.
 */
import { EigenvalueDecomposition, inverse, Matrix } from 'ml-matrix';
import { InputError } from '../errors.js';
import { featureLabel } from '../features/definitions.js';
import type { DataMatrix } from '../model/index.js';

/** A feature explained by the others at least this well makes the set nearly collinear. */
export const NEAR_COLLINEAR_R2 = 0.95;
/** An eigenvalue of the correlation matrix below this is zero: an exact linear relation. */
const EXACT_EIGENVALUE = 1e-9;
/** Share of a zero eigenvalue's eigenvector a feature must carry to be named as involved. */
const INVOLVED_WEIGHT = 0.05;

function listWords(names: readonly string[]): string {
  return names.length <= 1 ? (names[0] ?? '') : `${names.slice(0, -1).join(', ')} and ${names[names.length - 1]}`;
}

/** Refuses constant and exactly collinear features; returns the warnings of a nearly collinear set. */
export function checkFeatureSet(data: DataMatrix, features: readonly string[]): string[] {
  const d = data.cols;
  const complete: number[] = [];
  for (let i = 0; i < data.rows; i++) {
    let ok = true;
    for (let j = 0; j < d && ok; j++) ok = Number.isFinite(data.values[i * d + j]);
    if (ok) complete.push(i);
  }
  const n = complete.length;
  if (n < 2) return [];
  const mean = new Float64Array(d);
  for (const i of complete) for (let j = 0; j < d; j++) mean[j] += data.values[i * d + j] / n;
  const covariance = new Float64Array(d * d);
  for (const i of complete) {
    for (let a = 0; a < d; a++) {
      const da = data.values[i * d + a] - mean[a];
      for (let b = 0; b <= a; b++) covariance[a * d + b] += (da * (data.values[i * d + b] - mean[b])) / n;
    }
  }
  const constant = features.filter((_, j) => !(covariance[j * d + j] > 1e-12 * Math.max(1, mean[j] * mean[j])));
  if (constant.length > 0) {
    throw new InputError(
      `The feature${constant.length > 1 ? 's' : ''} ${listWords(constant.map((name) => `"${name}" (${featureLabel(name)})`))} ` +
        `${constant.length > 1 ? 'have' : 'has'} the same value for every customer, so ${constant.length > 1 ? 'they tell' : 'it tells'} no customers apart; ` +
        'leave it out of the model. Nothing was stored.',
    );
  }
  if (d < 2) return [];
  const correlation = new Matrix(d, d);
  for (let a = 0; a < d; a++) {
    for (let b = 0; b <= a; b++) {
      const value = covariance[a * d + b] / Math.sqrt(covariance[a * d + a] * covariance[b * d + b]);
      correlation.set(a, b, value);
      correlation.set(b, a, value);
    }
  }
  const eigen = new EigenvalueDecomposition(correlation, { assumeSymmetric: true });
  const values = eigen.realEigenvalues;
  const smallest = values.indexOf(Math.min(...values));
  if (values[smallest] < EXACT_EIGENVALUE) {
    const vector = eigen.eigenvectorMatrix.getColumn(smallest);
    const involved = features.filter((_, j) => vector[j] * vector[j] >= INVOLVED_WEIGHT);
    throw new InputError(
      `The features ${listWords(involved.map((name) => `"${name}" (${featureLabel(name)})`))} are exactly collinear after their transforms: ` +
        'one is a linear function of the others, so the model cannot tell them apart. Drop one of them. Nothing was stored.',
    );
  }
  const precision = inverse(correlation);
  const explained = features.map((_, j) => 1 - 1 / precision.get(j, j));
  const worst = explained.indexOf(Math.max(...explained));
  if (explained[worst] < NEAR_COLLINEAR_R2) return [];
  const others = features.filter((_, j) => j !== worst).map(featureLabel);
  return [
    `The features are nearly collinear: ${featureLabel(features[worst])} is explained by ${listWords(others)} with R² = ${explained[worst].toFixed(3)} ` +
      `in the transformed space (${NEAR_COLLINEAR_R2} or more), so full covariances fit that thin direction instead of the groups. ` +
      `Drop ${featureLabel(features[worst])} ("${features[worst]}").`,
  ];
}
