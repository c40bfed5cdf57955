import { describe, expect, it } from 'vitest';
import { climbHasConverged, fitMixture } from '../../src/model/index.js';
import { fitSettings, referenceData } from './support.js';

describe('when EM stops (climbHasConverged)', () => {
  const tol = 1e-3;

  it('stops on a small step after fast-shrinking gains, where little is left to climb', () => {
    // Gains 0.005 then 0.0005 (ratio 0.1): the projected rest 0.0005 / 0.9 = 0.00056 < tol.
    expect(climbHasConverged(0.0005, 0.005, tol)).toBe(true);
  });

  it('goes on through a slow climb whose steps are small but whose total still to come is not', () => {
    // Gains 0.001 then 0.0009 (ratio 0.9): the step alone is below tol, the projected rest 0.009 is not.
    expect(climbHasConverged(0.0009, 0.001, tol)).toBe(false);
    // A gain that grows is no sign of convergence, however small.
    expect(climbHasConverged(0.0002, 0.0001, tol)).toBe(false);
  });

  it('decides on the step alone when there is no earlier gain or the step is flat or falls', () => {
    expect(climbHasConverged(0.0002, NaN, tol)).toBe(true);
    expect(climbHasConverged(0, 0.01, tol)).toBe(true);
    expect(climbHasConverged(-1e-9, 0.01, tol)).toBe(true);
    expect(climbHasConverged(0.002, NaN, tol)).toBe(false);
  });

  it('never stops earlier than a step below tol would', () => {
    for (const gain of [0.0011, 0.005, 0.3]) for (const previousGain of [NaN, 0.5, 0.002, gain]) expect(climbHasConverged(gain, previousGain, tol)).toBe(false);
  });
});

describe('EM at the default tolerance ends near where it would end at a tight one', () => {
  it('on the reference datasets, single starts end within 1e-3 of the tight fit far more often than a step rule lets them', () => {
    // Datasets: test/reference/README.md (faithful and iris from R's datasets; thyroid, wdbc,
    // banknote and diabetes as mclust and the UCI repository publish them). Each cell is one start
    // (seed 3) fitted at the default tol and again at tol 1e-10 from the same start. Measured when
    // the Aitken projection was added: 70 of 108 cells end within 1e-3 (mean log-likelihood) of the
    // tight fit, against 40 of 108 when EM stopped at the first step gaining less than tol.
    let within = 0;
    let cells = 0;
    for (const name of ['faithful', 'iris', 'thyroid', 'wdbc', 'banknote', 'diabetes'] as const) {
      const data = referenceData(name);
      for (const covarianceType of ['diag', 'full'] as const) {
        for (let components = 3; components <= 5; components++) {
          for (const init of ['random-partition', 'kmeans', 'hierarchical'] as const) {
            const start = { ...fitSettings, components, covarianceType, init, restarts: 1, seed: 3 };
            const atDefault = fitMixture(data, start);
            const tight = fitMixture(data, { ...start, tol: 1e-10, maxIterations: 20_000 });
            cells++;
            if ((tight.logLikelihood - atDefault.logLikelihood) / data.rows < 1e-3) within++;
          }
        }
      }
    }
    expect(cells).toBe(108);
    expect(within).toBeGreaterThanOrEqual(60);
  }, 120_000);
});
