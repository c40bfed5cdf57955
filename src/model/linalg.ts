import { CholeskyDecomposition, Matrix } from 'ml-matrix';

/**
 * Small d × d linear algebra on row-major Float64Arrays. The decompositions go through ml-matrix;
 * the triangular inverse is a few lines of forward substitution on the factor it returns.
 */

/**
 * Lower-triangular Cholesky factor L of the symmetric d × d matrix stored at `offset` in `source`
 * (row-major), or null when the matrix is not positive definite. Only the lower triangle is read
 * (as LAPACK's dpotrf does), so a matrix symmetric only to rounding still factors.
 */
export function choleskyLower(source: Float64Array, offset: number, d: number): Float64Array | null {
  const rows: number[][] = Array.from({ length: d }, () => new Array<number>(d).fill(0));
  for (let i = 0; i < d; i++) {
    for (let j = 0; j <= i; j++) {
      const value = source[offset + i * d + j];
      rows[i][j] = value;
      rows[j][i] = value;
    }
  }
  const decomposition = new CholeskyDecomposition(new Matrix(rows));
  if (!decomposition.isPositiveDefinite()) return null;
  const lower = decomposition.lowerTriangularMatrix;
  const result = new Float64Array(d * d);
  for (let i = 0; i < d; i++) {
    for (let j = 0; j <= i; j++) {
      const value = lower.get(i, j);
      if (!(value === value) || (i === j && !(value > 0))) return null; // NaN or a zero pivot
      result[i * d + j] = value;
    }
  }
  return result;
}

/** Inverse of a lower-triangular d × d matrix (row-major), itself lower triangular. */
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

/**
 * Precision Cholesky factors W_c = L_c⁻¹ of k covariance matrices (k × d × d each way).
 * Throws when a covariance is not positive definite: callers fit with regularisation, so this
 * means a corrupt model.
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

/** Σ log W_ii of a lower-triangular d × d factor at `offset`: log |Σ|^(-1/2) for W = L⁻¹. */
export function logDiagonalSum(factor: Float64Array, offset: number, d: number): number {
  let sum = 0;
  for (let i = 0; i < d; i++) sum += Math.log(factor[offset + i * d + i]);
  return sum;
}
