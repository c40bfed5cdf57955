import { describe, expect, it } from 'vitest';
import { fitMixture, initMethods, parameterCount, type FitProgress } from '../../src/model/index.js';
import { fitSettings, referenceData, sameBits } from './support.js';

// Old Faithful: R's datasets::faithful (Azzalini & Bowman 1990), committed with its source under test/reference/data.
const faithful = referenceData('faithful');

describe('EM fit', () => {
  it('is reproducible bit for bit with the same seed, for every init and structure', () => {
    for (const init of initMethods) {
      for (const covarianceType of ['full', 'diag', 'spherical', 'tied'] as const) {
        const options = { ...fitSettings, components: 3, covarianceType, init, seed: 11, restarts: 2 };
        const first = fitMixture(faithful, options);
        const second = fitMixture(faithful, options);
        expect(first.logLikelihood).toBe(second.logLikelihood);
        expect(sameBits(first.model.means, second.model.means)).toBe(true);
        expect(sameBits(first.model.covariances, second.model.covariances)).toBe(true);
        expect(sameBits(first.model.weights, second.model.weights)).toBe(true);
      }
    }
  });

  it('different seeds start differently (the seed is used)', () => {
    const logLikelihoods = new Set<number>();
    for (let seed = 0; seed < 6; seed++) {
      logLikelihoods.add(fitMixture(faithful, { ...fitSettings, components: 4, covarianceType: 'full', init: 'random', restarts: 1, seed, maxIterations: 3, tol: 0 }).logLikelihood);
    }
    expect(logLikelihoods.size).toBeGreaterThan(1);
  });

  it('never lowers the log-likelihood from one iteration to the next (Dempster, Laird & Rubin 1977)', () => {
    for (const covarianceType of ['full', 'diag', 'spherical', 'tied'] as const) {
      const trace: number[] = [];
      fitMixture(faithful, {
      ...fitSettings,
        components: 3,
        covarianceType,
        init: 'random',
        restarts: 1,
        tol: 0,
        maxIterations: 60,
        regularization: 0,
        onProgress: (progress: FitProgress) => {
          if (progress.iteration > 0) trace.push(progress.logLikelihood);
        },
      });
      expect(trace).toHaveLength(60);
      for (let i = 1; i < trace.length; i++) expect(trace[i]).toBeGreaterThanOrEqual(trace[i - 1] - 1e-9);
    }
  });

  it('keeps the best of its restarts and reports all of them', () => {
    const fit = fitMixture(faithful, { ...fitSettings, components: 3, covarianceType: 'full', init: 'random', restarts: 6, seed: 3 });
    expect(fit.restartLogLikelihoods).toHaveLength(6);
    expect(fit.logLikelihood).toBe(Math.max(...fit.restartLogLikelihoods));
    expect(fit.restartLogLikelihoods[fit.bestRestart]).toBe(fit.logLikelihood);
    const alone = fitMixture(faithful, { ...fitSettings, components: 3, covarianceType: 'full', init: 'random', restarts: fit.bestRestart + 1, seed: 3 });
    // Restart r draws from its own stream, so the first r + 1 restarts replay exactly.
    expect(alone.restartLogLikelihoods).toEqual(fit.restartLogLikelihoods.slice(0, fit.bestRestart + 1));
  });

  it('computes BIC, AIC and ICL from the log-likelihood and the parameter count', () => {
    const fit = fitMixture(faithful, { ...fitSettings, components: 2, covarianceType: 'full' });
    const n = faithful.rows;
    // p = 2 · 3 covariance + 2 · 2 means + 1 weight = 11 (scikit-learn's _n_parameters, from memory)
    expect(fit.parameterCount).toBe(11);
    expect(parameterCount(2, 2, 'full')).toBe(11);
    expect(fit.bic).toBeCloseTo(-2 * fit.logLikelihood + 11 * Math.log(n), 9);
    expect(fit.aic).toBeCloseTo(-2 * fit.logLikelihood + 22, 9);
    expect(fit.meanLogLikelihood).toBeCloseTo(fit.logLikelihood / n, 12);
    expect(fit.converged).toBe(true);
    const weightSum = fit.model.weights.reduce((sum, weight) => sum + weight, 0);
    expect(weightSum).toBeCloseTo(1, 12);
  });

  it('computes ICL = BIC − 2 Σᵢ log max_c τ_ic, checked against posteriors worked out independently', () => {
    // Eight numbers with two overlapping groups, so the hard assignments carry real entropy.
    const x = [0, 0.4, 1.1, 1.6, 2.3, 2.9, 3.4, 4.2];
    const fit = fitMixture(
      { values: Float64Array.from(x), rows: 8, cols: 1 },
      { ...fitSettings, components: 2, covarianceType: 'full', tol: 1e-10, maxIterations: 5000, regularization: 0 },
    );
    const [w1, w2] = fit.model.weights;
    const [m1, m2] = fit.model.means;
    const [v1, v2] = [fit.model.covariances[0], fit.model.covariances[1]];
    // The normal density written out: φ(x; m, v) = exp(−(x − m)² / 2v) / √(2πv).
    const normal = (value: number, mean: number, variance: number) => Math.exp(-((value - mean) ** 2) / (2 * variance)) / Math.sqrt(2 * Math.PI * variance);
    let logLikelihood = 0;
    let sumLogMaxPosterior = 0;
    for (const value of x) {
      const joint = [w1 * normal(value, m1, v1), w2 * normal(value, m2, v2)];
      const total = joint[0] + joint[1];
      logLikelihood += Math.log(total);
      sumLogMaxPosterior += Math.log(Math.max(...joint) / total);
    }
    // p = 2 variances + 2 means + 1 weight = 5; BIC = −2 log L + 5 ln 8.
    const bic = -2 * logLikelihood + 5 * Math.log(8);
    const icl = bic - 2 * sumLogMaxPosterior;
    expect(fit.logLikelihood).toBeCloseTo(logLikelihood, 9);
    expect(fit.bic).toBeCloseTo(bic, 9);
    expect(fit.icl).toBeCloseTo(icl, 9);
    // The optimum (weights 0.454 / 0.546, means 0.718 / 3.044, variances 0.392 / 0.704), worked
    // as above once and written down: log L = −13.1800, BIC = 36.7572, ICL = 37.9336 — the
    // entropy term 1.1764 is what separates ICL from BIC here.
    expect(fit.logLikelihood).toBeCloseTo(-13.18, 3);
    expect(fit.bic).toBeCloseTo(36.7572, 3);
    expect(fit.icl).toBeCloseTo(37.9336, 3);
  });

  it('counts parameters per structure as scikit-learn does (from memory of _n_parameters)', () => {
    // d = 4, k = 3: full 3·10 + 12 + 2 = 44; diag 3·4 + 12 + 2 = 26; tied 10 + 12 + 2 = 24; spherical 3 + 12 + 2 = 17
    expect([parameterCount(3, 4, 'full'), parameterCount(3, 4, 'diag'), parameterCount(3, 4, 'tied'), parameterCount(3, 4, 'spherical')]).toEqual([44, 26, 24, 17]);
  });

  it('runs exactly maxIterations with tol 0 and says it did not converge', () => {
    const fit = fitMixture(faithful, { ...fitSettings, components: 2, covarianceType: 'diag', tol: 0, maxIterations: 7, restarts: 1 });
    expect(fit.iterations).toBe(7);
    expect(fit.converged).toBe(false);
  });

  it('expands diag, spherical and tied covariances to full matrices with the right structure', () => {
    const diag = fitMixture(faithful, { ...fitSettings, components: 2, covarianceType: 'diag' }).model;
    expect(diag.covariances[1]).toBe(0);
    expect(diag.covariances[2]).toBe(0);
    const spherical = fitMixture(faithful, { ...fitSettings, components: 2, covarianceType: 'spherical' }).model;
    expect(spherical.covariances[0]).toBe(spherical.covariances[3]);
    const tied = fitMixture(faithful, { ...fitSettings, components: 2, covarianceType: 'tied' }).model;
    expect(sameBits(tied.covariances.subarray(0, 4), tied.covariances.subarray(4, 8))).toBe(true);
    expect(tied.covariances[1]).not.toBe(0);
  });
});
