import { describe, expect, it } from 'vitest';
import { modelFromJSON } from '../../src/model/serialize.js';
import { scoreRows } from '../../src/model/score.js';
import type { CovarianceType } from '../../src/model/types.js';
import { explainBorderline, whyText } from '../../src/runs/why.js';
import { fitMixture } from '../../src/model/em.js';
import { fitSettings, referenceData } from '../model/support.js';

function model(covarianceType: CovarianceType, covariances: number[][][]) {
  return modelFromJSON({
    format: 'spendmix-mixture',
    version: 1,
    covarianceType,
    components: 2,
    dimensions: 2,
    regularization: 0,
    weights: [0.6, 0.4],
    means: [
      [0, 0],
      [2, 1],
    ],
    covariances,
  });
}

const features = ['average_basket', 'visits_per_month'];
const names = ['Tier 2', 'Tier 3'];
/** Component c as a one-component segment named names[c]. */
const single = (c: number, segmentNames = names) => ({ components: [c], name: segmentNames[c] });

describe('borderline why', () => {
  it('diagonal: prior plus the per-feature terms is exactly the log posterior odds', () => {
    const diag = model('diag', [
      [[1, 0], [0, 0.5]],
      [[2, 0], [0, 1]],
    ]);
    const x = [1.3, 0.2];
    const why = explainBorderline(diag, x, single(0), single(1), features);
    expect(why.method).toBe('exact');
    // Closed form for diagonal Gaussians (worked by hand): log-odds = log(π_a/π_b) + Σ_j c_j.
    const scored = scoreRows(diag, { values: Float64Array.from(x), rows: 1, cols: 2 });
    const logOdds = Math.log(scored.posteriors[0] / scored.posteriors[1]);
    const sum = why.priorLogOdds + why.terms.reduce((total, term) => total + term.contribution, 0);
    expect(sum).toBeCloseTo(logOdds, 12);
    // Term for basket: −½[ln 1 − ln 2 + 1.3²/1 − (1.3 − 2)²/2] = −½[−0.693147 + 1.69 − 0.245] = −0.375926.
    const basket = why.terms.find((term) => term.feature === 'average_basket')!;
    expect(basket.contribution).toBeCloseTo(-0.5 * (Math.log(1 / 2) + 1.69 - 0.245), 12);
    expect(basket.fits).toBe('Tier 3');
    const visits = why.terms.find((term) => term.feature === 'visits_per_month')!;
    // −½[ln 0.5 − ln 1 + 0.04/0.5 − 0.64/1] = −½[−0.693147 + 0.08 − 0.64] = 0.626574 → pulls to Tier 2.
    expect(visits.contribution).toBeCloseTo(-0.5 * (Math.log(0.5) + 0.08 - 0.64), 12);
    expect(visits.fits).toBe('Tier 2');
    // Ranked by strength: visit rate first.
    expect(why.terms.map((term) => term.feature)).toEqual(['visits_per_month', 'average_basket']);
    expect(why.text).toBe('visit rate fits Tier 2, basket size fits Tier 3, Tier 2 is the more common segment');
  });

  it('full covariance: Shapley terms see the correlation the margins miss, and add up to the log-odds', () => {
    const full = model('full', [
      [[1, 0.5], [0.5, 1]],
      [[1, -0.2], [-0.2, 1]],
    ]);
    const x = [1, 0.5];
    const why = explainBorderline(full, x, single(0), single(1), features);
    expect(why.method).toBe('shapley');
    expect(why.terms).toHaveLength(2);
    // Worked by hand. Each margin alone says nothing: v({basket}) = −½[(1−0)² − (1−2)²] = 0 and
    // v({visits}) = −½[0.5² − (0.5−1)²] = 0 (unit marginal variances). Jointly, with δa = (1, 0.5)
    // and δb = (−1, −0.5): δaᵀΣa⁻¹δa = (4/3)(1 − 0.5 + 0.25) = 1, δbᵀΣb⁻¹δb = (1/0.96)(1 + 0.2 +
    // 0.25) = 1.510417, so v(both) = −½[ln 0.75 + 1] + ½[ln 0.96 + 1.510417] = 0.378638.
    // Shapley: each feature gets ½[v({j}) − v(∅)] + ½[v(both) − v(other)] = 0.378638 / 2.
    const joint = 0.5 * Math.log(0.96 / 0.75) + 0.5 * (1.45 / 0.96 - 1);
    expect(joint).toBeCloseTo(0.378638, 6);
    for (const term of why.terms) {
      expect(term.contribution).toBeCloseTo(joint / 2, 12);
      expect(term.fits).toBe('Tier 2');
    }
    const scored = scoreRows(full, { values: Float64Array.from(x), rows: 1, cols: 2 });
    const logOdds = Math.log(scored.posteriors[0] / scored.posteriors[1]);
    expect(why.priorLogOdds + why.terms.reduce((total, term) => total + term.contribution, 0)).toBeCloseTo(logOdds, 12);
    expect(why.text).toBe('basket size fits Tier 2, visit rate fits Tier 2, Tier 2 is the more common segment');
  });

  it('Shapley terms equal the exact diagonal terms when the covariances are diagonal', () => {
    const covariances = [
      [[1, 0], [0, 0.5]],
      [[2, 0], [0, 1]],
    ];
    const x = [1.3, 0.2];
    const exact = explainBorderline(model('diag', covariances), x, single(0), single(1), features);
    const shapley = explainBorderline(model('full', covariances), x, single(0), single(1), features);
    expect(shapley.terms.map((term) => term.feature)).toEqual(exact.terms.map((term) => term.feature));
    shapley.terms.forEach((term, index) => expect(term.contribution).toBeCloseTo(exact.terms[index].contribution, 12));
  });

  it('Shapley terms plus the prior equal the log posterior odds on a fitted 4-feature model', () => {
    // Fisher's iris (R's datasets::iris), full covariances: its four measurements are correlated.
    const iris = referenceData('iris');
    const fitted = fitMixture(iris, { ...fitSettings, components: 3, covarianceType: 'full', restarts: 1 }).model;
    const scored = scoreRows(fitted, iris);
    const irisFeatures = ['spend_per_month', 'visits_per_month', 'average_basket', 'fresh_share'];
    for (const row of [0, 60, 77, 120, 133]) {
      const x = iris.values.subarray(row * 4, row * 4 + 4);
      const top = scored.topSegment[row];
      const second = scored.secondSegment[row];
      const why = explainBorderline(fitted, x, single(top, ['A', 'B', 'C']), single(second, ['A', 'B', 'C']), irisFeatures);
      const logOdds = Math.log(scored.posteriors[row * 3 + top] / scored.posteriors[row * 3 + second]);
      expect(why.priorLogOdds + why.terms.reduce((total, term) => total + term.contribution, 0)).toBeCloseTo(logOdds, 8);
    }
  });

  it('skips missing features and explains with what is observed', () => {
    const diag = model('diag', [
      [[1, 0], [0, 1]],
      [[1, 0], [0, 1]],
    ]);
    const why = explainBorderline(diag, [NaN, 0.9], single(1), single(0), features);
    expect(why.terms.map((term) => term.feature)).toEqual(['visits_per_month']);
    expect(whyText([], 0)).toBe('the features fit both segments about equally');
  });
});
