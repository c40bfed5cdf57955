import { describe, expect, it } from 'vitest';
import { modelFromJSON } from '../../src/model/serialize.js';
import { scoreRows } from '../../src/model/score.js';
import type { CovarianceType } from '../../src/model/types.js';
import { explainBorderline, whyText } from '../../src/runs/why.js';

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

describe('borderline why', () => {
  it('diagonal: prior plus the per-feature terms is exactly the log posterior odds', () => {
    const diag = model('diag', [
      [[1, 0], [0, 0.5]],
      [[2, 0], [0, 1]],
    ]);
    const x = [1.3, 0.2];
    const why = explainBorderline(diag, x, 0, 1, features, names);
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

  it('full covariance: marginal terms, stated as such', () => {
    const full = model('full', [
      [[1, 0.5], [0.5, 1]],
      [[1, -0.2], [-0.2, 1]],
    ]);
    const why = explainBorderline(full, [1, 0.5], 0, 1, features, names);
    expect(why.method).toBe('marginal');
    expect(why.terms).toHaveLength(2);
    // With equal marginal variances the term is −½[(x−μa)² − (x−μb)²]: basket −½[1 − 1] = 0.
    expect(why.terms.find((term) => term.feature === 'average_basket')!.contribution).toBeCloseTo(0, 12);
    // visits: −½[0.25 − 0.25] = 0 as well: nothing separates them on the margins but the prior.
    // No feature is named when none pulls; only the segments' sizes tip the balance.
    expect(why.text).toBe('Tier 2 is the more common segment');
  });

  it('skips missing features and explains with what is observed', () => {
    const diag = model('diag', [
      [[1, 0], [0, 1]],
      [[1, 0], [0, 1]],
    ]);
    const why = explainBorderline(diag, [NaN, 0.9], 1, 0, features, names);
    expect(why.terms.map((term) => term.feature)).toEqual(['visits_per_month']);
    expect(whyText([], 0)).toBe('the features fit both segments about equally');
  });
});
