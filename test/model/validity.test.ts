import { describe, expect, it } from 'vitest';
import { InputError } from '../../src/errors.js';
import { fitMixture, sweepMixtures, type CovarianceType, type DataMatrix } from '../../src/model/index.js';
import { rowCovariance } from '../../src/model/gaussian.js';
import { dataScaleOf, refusalOf, RELATIVE_VARIANCE_FLOOR } from '../../src/model/validity.js';
import { fitSettings, matrix, modelOf, referenceData } from './support.js';

/** n rows of two correlated features, seeded by a simple formula (no outside source needed: the rule is checked on models built by hand). */
function twoFeatures(n: number, scale = 1): DataMatrix {
  return matrix(Array.from({ length: n }, (_, i) => [scale * Math.sin(i * 1.7) * 3, scale * (Math.cos(i * 0.9) + Math.sin(i * 1.7))]));
}

/** A two-component model whose second component has covariance `second` (+ the ridge, as a fit adds it). */
function model(covarianceType: CovarianceType, weights: [number, number], second: number[][], ridge: number, scale = 1) {
  const first = [[scale * scale, 0], [0, scale * scale]];
  const withRidge = (matrix: number[][]) => matrix.map((row, a) => row.map((value, b) => value + (a === b ? ridge : 0)));
  const built = modelOf(covarianceType, weights, [[0, 0], [scale, scale]], [withRidge(first), withRidge(second)]);
  return { ...built, regularization: ridge };
}

describe('which fits may compete (validity.ts)', () => {
  const data = twoFeatures(200);
  const scale = dataScaleOf(rowCovariance(data.values, data.rows, data.cols), data.cols);

  it('accepts components with enough members and a spread of their own', () => {
    expect(refusalOf(model('full', [0.5, 0.5], [[0.5, 0.1], [0.1, 0.4]], 1e-6), 200, scale, [])).toBeNull();
  });

  it('refuses a component with fewer effective members than its structure needs: d + 1 full, 2 diag and spherical, 1 tied', () => {
    // 200 rows: weight 0.014 is 2.8 members — below 3 for full in 2-D, enough for diag (2).
    const spread = [[0.5, 0], [0, 0.4]];
    expect(refusalOf(model('full', [0.986, 0.014], spread, 1e-6), 200, scale, [])).toMatch(
      /component 2 of 2 holds 2\.80 effective members \(its weight × 200 rows\), fewer than the 3 a full covariance needs in 2 dimensions/,
    );
    expect(refusalOf(model('diag', [0.986, 0.014], spread, 1e-6), 200, scale, [])).toBeNull();
    expect(refusalOf(model('diag', [0.996, 0.004], spread, 1e-6), 200, scale, [])).toMatch(/0\.80 effective members .* fewer than the 2 a diag covariance/);
    expect(refusalOf(model('spherical', [0.996, 0.004], [[0.4, 0], [0, 0.4]], 1e-6), 200, scale, [])).toMatch(/fewer than the 2 a spherical covariance/);
    const tied = [[1, 0], [0, 1]];
    expect(refusalOf(model('tied', [0.994, 0.006], tied, 1e-6), 200, scale, [])).toBeNull(); // 1.2 members: its mean is estimable
    expect(refusalOf(model('tied', [0.998, 0.002], tied, 1e-6), 200, scale, [])).toMatch(/0\.40 effective members .* fewer than the 1 a tied covariance/);
  });

  it('refuses a covariance thinner than 1e-6 of the data\'s spread in some direction, whatever the units', () => {
    // Variance 1e-9 along the second feature: far below the floor relative to the data.
    const thin = [[0.5, 0], [0, 1e-9]];
    expect(refusalOf(model('full', [0.5, 0.5], thin, 0), 200, scale, [])).toMatch(/held up by the regularisation floor: along its thinnest direction its own variance is .* of the data's \(below 1e-6\)/);
    // The same data and model in units a million times larger (variances 1e12 times): same verdicts.
    const big = twoFeatures(200, 1e6);
    const bigScale = dataScaleOf(rowCovariance(big.values, big.rows, big.cols), big.cols);
    const scaled = (matrix: number[][]) => matrix.map((row) => row.map((value) => value * 1e12));
    expect(refusalOf(model('full', [0.5, 0.5], scaled(thin), 0, 1e6), 200, bigScale, [])).toMatch(/below 1e-6/);
    expect(refusalOf(model('full', [0.5, 0.5], scaled([[0.5, 0.1], [0.1, 0.4]]), 0, 1e6), 200, bigScale, [])).toBeNull();
    // A thin direction that is not along an axis (the rule looks at every direction): variance
    // 1e-9 along (1, 1) / √2, 1 along (1, −1) / √2.
    const diagonal = [[0.5 + 5e-10, 5e-10 - 0.5], [5e-10 - 0.5, 0.5 + 5e-10]];
    expect(refusalOf(model('full', [0.5, 0.5], diagonal, 0), 200, scale, [])).toMatch(/below 1e-6/);
    expect(RELATIVE_VARIANCE_FLOOR).toBe(1e-6);
  });

  it('refuses a covariance whose ridge carries more of its thinnest variance than the data do, or whose ridge had to be raised', () => {
    // Own variance 0.01 along the second feature, ridge 0.1: the floor holds it up.
    expect(refusalOf(model('full', [0.5, 0.5], [[0.5, 0], [0, 0.01]], 0.1), 200, scale, [])).toMatch(
      /its own variance along its thinnest direction \(0\.010\) is below the 0\.10 added to its diagonal/,
    );
    // The M-step had to add 0.05 more to component 2: counted with the ridge.
    expect(refusalOf(model('full', [0.5, 0.5], [[0.5, 0], [0, 0.06]], 0), 200, scale, [{ component: 1, added: 0.05 }])).toMatch(/below the 0\.050 added/);
  });

  it('keeps the best valid restart: Old Faithful diag, k = 5, whose best restart sits on one whole-minute waiting time', () => {
    // R's datasets::faithful; 10 k-means starts, tol 1e-6, as scikit-learn was run (sklearn-results.json
    // records its winner there with smallestVarianceRatio ≈ 5e-9).
    const fit = fitMixture(referenceData('faithful'), { ...fitSettings, components: 5, covarianceType: 'diag', restarts: 10, tol: 1e-6, maxIterations: 1000, init: 'kmeans' });
    const refused = fit.restartRefusals.flatMap((reason, restart) => (reason ? [{ reason, logLikelihood: fit.restartLogLikelihoods[restart] }] : []));
    expect(refused.length).toBeGreaterThan(0);
    expect(refused[0].reason).toMatch(/held up by the regularisation floor/);
    expect(refused[0].logLikelihood).toBeGreaterThan(fit.logLikelihood); // it would have won
    expect(fit.refused).toBeNull();
    expect(fit.logLikelihood).toBe(Math.max(...fit.restartLogLikelihoods.filter((_, restart) => fit.restartRefusals[restart] === null)));
  });

  it('marks refused fits in the sweep table, never chooses one, and says what to change when every fit is refused', async () => {
    // Three distinct points, six rows each: every 2- or 3-component full fit puts a component on
    // one point or two (no spread in some direction); one component over all three is fine.
    const rows: number[][] = [];
    for (let i = 0; i < 6; i++) rows.push([0, 0], [1, 0], [0, 1]);
    const points = matrix(rows);
    const sweep = await sweepMixtures(points, { ...fitSettings, componentRange: [1, 3], covarianceTypes: ['full'], criterion: 'bic', threads: 0 });
    expect(sweep.table.map((row) => row.refused === null)).toEqual([true, false, false]);
    expect(sweep.bestRow.k).toBe(1);
    const lower = sweep.table[1].bic < sweep.table[0].bic; // the collapsed fits would win on BIC
    expect(lower).toBe(true);
    let error: unknown;
    try {
      await sweepMixtures(points, { ...fitSettings, componentRange: [2, 3], covarianceTypes: ['full'], criterion: 'bic', threads: 0 });
    } catch (caught) {
      error = caught;
    }
    expect(error).toBeInstanceOf(InputError);
    expect((error as InputError).message).toMatch(/^Every fit was refused: each has a component too small to estimate its covariance \(for example k = 2 full: component \d of 2 is held up by the regularisation floor.*\)\. Try fewer components, other features, or a larger regularisation\.$/);
    expect((error as InputError).details?.refused).toHaveLength(2);
  });
});
