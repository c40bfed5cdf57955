import { describe, expect, it } from 'vitest';
import { emptyStatistics, expectationStep, expectationTerms } from '../../src/model/estep.js';
import { patternExpectationStep, groupByMissingPattern } from '../../src/model/missing.js';
import { restartStream } from '../../src/model/random.js';
import { fitMixture, type CovarianceType } from '../../src/model/index.js';
import { fitSettings } from './support.js';

/**
 * The unrolled per-dimension E-step kernel against the plain loop of the missing-value path
 * (a separate implementation: marginal factors built per pattern), on seeded data for d = 1…7
 * and every structure: log-likelihoods, ICL sums and statistics must agree to rounding.
 */
describe('E-step kernel', () => {
  it('agrees with the pattern-by-pattern loop for d = 1…7 and all structures', () => {
    const random = restartStream(17, 0);
    for (let d = 1; d <= 7; d++) {
      const rows = 300;
      const values = new Float64Array(rows * d);
      for (let i = 0; i < values.length; i++) values[i] = (i % 3) * 2 + random.float() * (1 + (i % d));
      for (const covarianceType of ['full', 'diag', 'spherical', 'tied'] as CovarianceType[]) {
        const { model } = fitMixture({ values, rows, cols: d }, { ...fitSettings, components: 3, covarianceType, restarts: 1, maxIterations: 5 });
        const fast = emptyStatistics(3, d, false, model.means);
        const fastSummary = expectationStep(values, rows, expectationTerms(model), fast, null);
        const plain = emptyStatistics(3, d, false, model.means);
        const plainSummary = patternExpectationStep(values, model, groupByMissingPattern(values, rows, d), { statistics: plain });
        expect(fastSummary.logLikelihood).toBeCloseTo(plainSummary.logLikelihood, 7);
        expect(fastSummary.sumLogMaxPosterior).toBeCloseTo(plainSummary.sumLogMaxPosterior, 7);
        expect(fastSummary.worstRow).toBe(plainSummary.worstRow);
        for (let i = 0; i < fast.secondMoments.length; i++) expect(fast.secondMoments[i]).toBeCloseTo(plain.secondMoments[i], 6);
        for (let i = 0; i < fast.firstMoments.length; i++) expect(fast.firstMoments[i]).toBeCloseTo(plain.firstMoments[i], 6);
      }
    }
  });
});
