import { describe, expect, it } from 'vitest';
import { imputeMissing, scoreRows } from '../../src/model/index.js';
import { matrix, modelOf } from './support.js';

/**
 * Log densities of multivariate normals worked by hand from the closed form
 * log N(x | μ, Σ) = −(d/2) log 2π − ½ log|Σ| − ½ (x−μ)ᵀ Σ⁻¹ (x−μ) (common practice; any
 * multivariate statistics text). Constants: log 2π = 1.8378770664, log 8π = 3.2241714275,
 * log 36 = 3.5835189385, log 3 = 1.0986122887, log 4π = 2.5310242470.
 */
describe('closed-form normal densities', () => {
  it('1-D: N(1 | 0, 4) = −½ log 8π − 1/8', () => {
    // −½ · 3.2241714275 − 0.125 = −1.6120857138 − 0.125 = −1.7370857138
    const scored = scoreRows(modelOf('full', [1], [[0]], [[[4]]]), matrix([[1]]));
    expect(scored.logDensity[0]).toBeCloseTo(-1.7370857138, 9);
  });

  it('2-D diagonal: μ = (1, 2), Σ = diag(4, 9), x = (3, 5)', () => {
    // quadratic form (2/2)² + (3/3)² = 2; −log 2π − ½ log 36 − 1 = −1.8378770664 − 1.7917594692 − 1 = −4.6296365357
    for (const structure of ['full', 'diag'] as const) {
      const scored = scoreRows(modelOf(structure, [1], [[1, 2]], [[[4, 0], [0, 9]]]), matrix([[3, 5]]));
      expect(scored.logDensity[0]).toBeCloseTo(-4.6296365357, 9);
    }
  });

  it('2-D with correlation: Σ = [[2, 1], [1, 2]], x = (1, 0)', () => {
    // |Σ| = 3, Σ⁻¹ = [[2, −1], [−1, 2]] / 3, quadratic form 2/3;
    // −1.8378770664 − ½ · 1.0986122887 − 1/3 = −1.8378770664 − 0.5493061443 − 0.3333333333 = −2.7205165441
    const scored = scoreRows(modelOf('full', [1], [[0, 0]], [[[2, 1], [1, 2]]]), matrix([[1, 0]]));
    expect(scored.logDensity[0]).toBeCloseTo(-2.7205165441, 9);
  });

  it('a two-component mixture: density, posteriors, confidence and margin', () => {
    // Components N(0, 1) and N(2, 1) in 1-D, weights 0.25 / 0.75, x = 1: both densities equal
    // φ(1) = exp(−½ − ½ log 2π) = 0.2419707245, so p(x) = φ(1), posteriors = the weights,
    // confidence 0.75, margin 0.5, log density = −0.5 − 0.9189385332 = −1.4189385332.
    const scored = scoreRows(modelOf('full', [0.25, 0.75], [[0], [2]], [[[1]], [[1]]]), matrix([[1]]));
    expect(scored.logDensity[0]).toBeCloseTo(-1.4189385332, 9);
    expect(scored.posteriors[0]).toBeCloseTo(0.25, 12);
    expect(scored.posteriors[1]).toBeCloseTo(0.75, 12);
    expect(scored.topSegment[0]).toBe(1);
    expect(scored.secondSegment[0]).toBe(0);
    expect(scored.confidence[0]).toBeCloseTo(0.75, 12);
    expect(scored.margin[0]).toBeCloseTo(0.5, 12);
    expect(scored.partial[0]).toBe(0);
  });

  it('a row with one feature missing is scored on the marginal of the other', () => {
    // Σ = [[2, 1], [1, 2]], x = (1, ?): the marginal of x₁ is N(0, 2):
    // −½ log 4π − 1²/(2·2) = −1.2655121235 − 0.25 = −1.5155121235.
    const model = modelOf('full', [1], [[0, 0]], [[[2, 1], [1, 2]]]);
    const scored = scoreRows(model, matrix([[1, NaN], [NaN, 1]]));
    expect(scored.logDensity[0]).toBeCloseTo(-1.5155121235, 9);
    expect(scored.logDensity[1]).toBeCloseTo(-1.5155121235, 9);
    expect(Array.from(scored.partial)).toEqual([1, 1]);
  });

  it('conditional-mean imputation: E[x₂ | x₁] = μ₂ + Σ₂₁/Σ₁₁ (x₁ − μ₁), weighted by the posterior', () => {
    // One component: E[x₂ | x₁ = 1] = 0 + (1/2)(1 − 0) = 0.5.
    const single = imputeMissing(modelOf('full', [1], [[0, 0]], [[[2, 1], [1, 2]]]), matrix([[1, NaN]]));
    expect(single.values[0]).toBe(1);
    expect(single.values[1]).toBeCloseTo(0.5, 12);
    // Two components with the same marginal in x₁ (posteriors stay at the weights 0.4 / 0.6):
    // component 1 N((0, 0), [[1, 0.5], [0.5, 1]]) gives 0.5 · 1 = 0.5; component 2
    // N((0, 10), [[1, −0.5], [−0.5, 1]]) gives 10 − 0.5 = 9.5; mixed: 0.4 · 0.5 + 0.6 · 9.5 = 5.9.
    const mixed = imputeMissing(
      modelOf('full', [0.4, 0.6], [[0, 0], [0, 10]], [[[1, 0.5], [0.5, 1]], [[1, -0.5], [-0.5, 1]]]),
      matrix([[1, NaN]]),
    );
    expect(mixed.values[1]).toBeCloseTo(5.9, 12);
  });

  it('refuses data whose width differs from the model', () => {
    expect(() => scoreRows(modelOf('full', [1], [[0, 0]], [[[1, 0], [0, 1]]]), matrix([[1, 2, 3]]))).toThrow(/2 feature\(s\) but the data has 3/);
  });
});
