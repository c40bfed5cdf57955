/**
 * Which fits may compete in model choice (DESIGN.md §5, "Valid fits only"). A fit is refused when
 * one of its components cannot carry the covariance its structure gives it:
 *
 * 1. Too few effective members: N_c = Σᵢ τ_ic (the component's weight × n) below the structure's
 *    minimum (gaussian.ts, covarianceEstimators: d + 1 for full — fewer points span less than d
 *    dimensions, so the scatter is singular —, 2 for diag and spherical — one point has no
 *    spread —, 1 for tied — the shared covariance is pooled over all rows, so a component needs
 *    mass only for its mean).
 * 2. A covariance held up only by the regularisation floor. With Σ̂_c the component's own
 *    covariance (the fitted one less the ridge added to its diagonal) and S the covariance of all
 *    rows, either
 *    a. along some direction Σ̂_c's variance is below RELATIVE_VARIANCE_FLOOR (1e-6) of S's
 *       variance along the same direction — the smallest generalised eigenvalue of (Σ̂_c, S),
 *       the smallest eigenvalue of W Σ̂_c Wᵀ for S = L Lᵀ, W = L⁻¹ — so the component is
 *       thinner than a thousandth of the data's spread there (scale-free: the same under any
 *       change of units or any invertible linear change of the features; 1e-6 is the default
 *       ridge of standardised data); or
 *    b. Σ̂_c's smallest eigenvalue is below the ridge on its diagonal: the floor carries more of
 *       the variance along that direction than the data do.
 *    A component on a repeated value (a single row, or rows equal in one feature) fails both.
 */
import { covarianceEstimators, factorWithRidge, symmetricEigen, type RaisedRidge } from './gaussian.js';
import type { MixtureModel } from './types.js';

/** Own variance, as a share of the data's along the same direction, below which a covariance counts as collapsed. */
export const RELATIVE_VARIANCE_FLOOR = 1e-6;

/**
 * W = L⁻¹ (d × d, lower triangular) of the rows' covariance S = L Lᵀ (gaussian.ts, rowCovariance),
 * through a minimal ridge when the features are exactly collinear.
 */
export function dataScaleOf(covariance: Float64Array, d: number): Float64Array {
  return factorWithRidge(Float64Array.from(covariance), 1, d, false, 0).precisionCholesky;
}

/**
 * Why the fitted model may not compete (the first component that fails, in plain words), or null.
 * `rows`: n; `dataScale`: dataScaleOf the fitted rows; `raised`: components whose ridge the last
 * M-step had to raise (gaussian.ts, factorWithRidge).
 */
export function refusalOf(model: MixtureModel, rows: number, dataScale: Float64Array, raised: readonly RaisedRidge[]): string | null {
  const { components: k, dimensions: d, covarianceType } = model;
  const estimator = covarianceEstimators[covarianceType];
  const needed = estimator.minimumMembers(d);
  const dd = d * d;
  const own = new Float64Array(dd);
  const relative = new Float64Array(dd);
  for (let c = 0; c < k; c++) {
    const members = model.weights[c] * rows;
    if (members < needed * (1 - 1e-9)) {
      return (
        // Rounded down, so a count just short of the minimum never prints as the minimum itself.
        `component ${c + 1} of ${k} holds ${(Math.floor(members * 100) / 100).toFixed(2)} effective members (its weight × ${rows} rows), ` +
        `fewer than the ${needed} a ${covarianceType} covariance needs in ${d} dimension${d === 1 ? '' : 's'}`
      );
    }
    const extra = raised.find((entry) => entry.component === (estimator.shared ? 0 : c))?.added ?? 0;
    const ridge = model.regularization + extra;
    for (let i = 0; i < dd; i++) own[i] = model.covariances[c * dd + i];
    for (let a = 0; a < d; a++) own[a * d + a] -= ridge;
    const smallestOwn = symmetricEigen(own, 0, d).values[0];
    // W Σ̂ Wᵀ with W lower triangular.
    for (let a = 0; a < d; a++) {
      for (let b = 0; b <= a; b++) {
        let sum = 0;
        for (let i = 0; i <= a; i++) for (let j = 0; j <= b; j++) sum += dataScale[a * d + i] * own[i * d + j] * dataScale[b * d + j];
        relative[a * d + b] = sum;
        relative[b * d + a] = sum;
      }
    }
    const smallestRelative = symmetricEigen(relative, 0, d).values[0];
    if (smallestRelative < RELATIVE_VARIANCE_FLOOR) {
      return (
        `component ${c + 1} of ${k} is held up by the regularisation floor: along its thinnest direction its own variance is ` +
        `${Math.max(0, smallestRelative).toExponential(1)} of the data's (below ${RELATIVE_VARIANCE_FLOOR.toExponential(0)})`
      );
    }
    if (smallestOwn < ridge) {
      return (
        `component ${c + 1} of ${k} is held up by the regularisation floor: its own variance along its thinnest direction ` +
        `(${Math.max(0, smallestOwn).toPrecision(2)}) is below the ${ridge.toPrecision(2)} added to its diagonal`
      );
    }
  }
  return null;
}
