import { CholeskyDecomposition, Matrix } from 'ml-matrix';
import { describe, expect, it } from 'vitest';
import {
  choleskyInPlace,
  componentLogDensity,
  covarianceEstimators,
  marginalLogDensity,
  normalizeLogWeights,
  precisionCholeskyOf,
} from '../../src/model/gaussian.js';
import { restartStream } from '../../src/model/index.js';
import { modelOf } from './support.js';

describe('the Gaussian numerics (gaussian.ts)', () => {
  it('factors by hand-worked Cholesky and refuses a matrix that is not positive definite', () => {
    // [[4, 2], [2, 3]] = L Lᵀ with L = [[2, 0], [1, √2]].
    const matrix = Float64Array.from([4, 2, 2, 3]);
    expect(choleskyInPlace(matrix, 0, 2)).toBe(true);
    expect(Array.from(matrix)).toEqual([2, 0, 1, Math.SQRT2]);
    expect(choleskyInPlace(Float64Array.from([1, 2, 2, 1]), 0, 2)).toBe(false); // eigenvalues 3 and −1
  });

  it('gives the same bits as ml-matrix\'s CholeskyDecomposition on seeded 6 × 6 matrices', () => {
    const random = restartStream(3, 0);
    for (let trial = 0; trial < 20; trial++) {
      const d = 6;
      const a = Array.from({ length: d * d }, () => random.float() - 0.5);
      const spd = new Float64Array(d * d);
      for (let i = 0; i < d; i++) for (let j = 0; j < d; j++) for (let r = 0; r < d; r++) spd[i * d + j] += a[i * d + r] * a[j * d + r] + (i === j && r === 0 ? 0.1 : 0);
      const rows = Array.from({ length: d }, (_, i) => Array.from(spd.subarray(i * d, i * d + d)));
      const reference = new CholeskyDecomposition(new Matrix(rows)).lowerTriangularMatrix;
      const ours = Float64Array.from(spd);
      expect(choleskyInPlace(ours, 0, d)).toBe(true);
      for (let i = 0; i < d; i++) for (let j = 0; j < d; j++) expect(ours[i * d + j]).toBe(reference.get(i, j));
    }
  });

  it('adds in the log domain without overflow', () => {
    const large = Float64Array.from([1000, 1000]);
    expect(normalizeLogWeights(large, 0, 2)).toBeCloseTo(1000 + Math.LN2, 12);
    expect(Array.from(large)).toEqual([0.5, 0.5]);
    const weights = Float64Array.from([Math.log(1), Math.log(3)]);
    expect(normalizeLogWeights(weights, 0, 2)).toBeCloseTo(Math.log(4), 12);
    expect(weights[0]).toBeCloseTo(0.25, 15);
    expect(weights[1]).toBeCloseTo(0.75, 15);
  });

  it('component and marginal log densities match the closed forms', () => {
    // Σ = [[2, 1], [1, 2]], μ = 0, x = (1, 0): −log 2π − ½ log 3 − 1/3 = −2.7205165441 (as in
    // density.test.ts); the marginal of x₁ is N(0, 2): −½ log 4π − 1/4 = −1.5155121235.
    const model = modelOf('full', [1], [[0, 0]], [[[2, 1], [1, 2]]]);
    expect(componentLogDensity(model, 0, [1, 0])).toBeCloseTo(-2.7205165441, 9);
    expect(marginalLogDensity(model, 0, [1, NaN], [0])).toBeCloseTo(-1.5155121235, 9);
    expect(marginalLogDensity(model, 0, [1, 0], [0, 1])).toBeCloseTo(-2.7205165441, 9);
    expect(marginalLogDensity(model, 0, [1, 0], [])).toBe(0);
    expect(() => precisionCholeskyOf(Float64Array.from([1, 2, 2, 1]), 1, 2)).toThrow(/not positive definite/);
  });

  it('has one estimator per structure: minimum members, parameters, and how the scatter becomes the covariance', () => {
    expect(['full', 'diag', 'spherical', 'tied'].map((type) => covarianceEstimators[type as 'full'].minimumMembers(4))).toEqual([5, 2, 2, 1]);
    expect(['full', 'diag', 'spherical', 'tied'].map((type) => covarianceEstimators[type as 'full'].parameters(3, 4))).toEqual([30, 12, 3, 10]);
    // Two components in 2-D with scatter diag(1, 3) and diag(5, 7) (lower triangles; masses 1 and 3).
    const scatter = () => Float64Array.from([1, 0, 0, 3, 5, 0, 0, 7]);
    const spherical = scatter();
    covarianceEstimators.spherical.estimate(spherical, Float64Array.from([1, 3]), 2, 2);
    expect(Array.from(spherical)).toEqual([2, 0, 0, 2, 6, 0, 0, 6]);
    const tied = scatter();
    covarianceEstimators.tied.estimate(tied, Float64Array.from([1, 3]), 2, 2);
    // (1 · diag(1, 3) + 3 · diag(5, 7)) / 4 = diag(4, 6) for both.
    expect(Array.from(tied)).toEqual([4, 0, 0, 6, 4, 0, 0, 6]);
    const full = Float64Array.from([2, 0, 1, 3]);
    covarianceEstimators.full.estimate(full, Float64Array.from([1]), 1, 2);
    expect(Array.from(full)).toEqual([2, 1, 1, 3]);
  });
});
