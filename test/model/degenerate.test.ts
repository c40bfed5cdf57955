import { describe, expect, it } from 'vitest';
import { fitMixture } from '../../src/model/index.js';
import { fitSettings, inputErrorOf, matrix, referenceData } from './support.js';

const faithful = referenceData('faithful'); // R's datasets::faithful (Azzalini & Bowman 1990)

describe('degenerate input', () => {
  it('lists the rows holding NaN or Infinity (1-based)', () => {
    const values = Float64Array.from(faithful.values);
    values[2 * 2 + 1] = NaN; // row 3
    values[9 * 2] = Infinity; // row 10
    const error = inputErrorOf(() => fitMixture({ ...faithful, values }, { ...fitSettings, components: 2, covarianceType: 'full' }));
    expect(error.message).toMatch(/2 row\(s\) hold NaN or infinite values: row 3, 10\./);
    expect(error.details).toEqual({ rows: [3, 10] });
  });

  it('allows NaN but not Infinity on the missing-value path', () => {
    const values = Float64Array.from(faithful.values);
    values[0] = NaN;
    values[5] = -Infinity; // row 3
    expect(inputErrorOf(() => fitMixture({ ...faithful, values }, { ...fitSettings, components: 2, covarianceType: 'full', missing: 'em' })).message).toMatch(/infinite values: row 3\./);
    const allMissing = Float64Array.from(faithful.values);
    allMissing[8] = NaN;
    allMissing[9] = NaN; // row 5 has nothing observed
    expect(inputErrorOf(() => fitMixture({ ...faithful, values: allMissing }, { ...fitSettings, components: 2, covarianceType: 'full', missing: 'em' })).message).toMatch(/no observed value at all: row 5/);
  });

  it('names a zero-variance feature', () => {
    const rows = Array.from({ length: 30 }, (_, i) => [i, 7, i * i]);
    const data = { ...matrix(rows), columnNames: ['spend', 'visits', 'basket'] };
    expect(inputErrorOf(() => fitMixture(data, { ...fitSettings, components: 2, covarianceType: 'diag' })).message).toMatch(/Feature "visits" \(column 2\) has zero variance/);
  });

  it('refuses too few rows for k and the structure, saying how many are needed', () => {
    const small = matrix(Array.from({ length: 12 }, (_, i) => [i, (i * 7) % 5]));
    // full, k = 3, d = 2: 3 · 3 + 6 + 2 = 17 parameters
    expect(inputErrorOf(() => fitMixture(small, { ...fitSettings, components: 3, covarianceType: 'full' })).message).toMatch(/12 rows are too few .* 17 free parameters, so at least 18 rows/);
    // spherical k = 3: 3 + 6 + 2 = 11 parameters: 12 rows are enough
    expect(fitMixture(small, { ...fitSettings, components: 3, covarianceType: 'spherical' }).model.components).toBe(3);
  });

  it('rejects bad options with the allowed values', () => {
    expect(inputErrorOf(() => fitMixture(faithful, { ...fitSettings, components: 0, covarianceType: 'full' })).message).toMatch(/components must be a whole number ≥ 1/);
    expect(inputErrorOf(() => fitMixture(faithful, { ...fitSettings, components: 2, covarianceType: 'round' as never })).message).toMatch(/Unknown covariance structure "round"; use one of full, diag, spherical, tied/);
    expect(inputErrorOf(() => fitMixture(faithful, { ...fitSettings, components: 2, covarianceType: 'full', init: 'best' as never })).message).toMatch(/Unknown initialisation/);
    expect(inputErrorOf(() => fitMixture(faithful, { ...fitSettings, components: 2, covarianceType: 'full', tol: -1 })).message).toMatch(/tol must be/);
  });

  it('re-seeds a component that empties, then leaves it near zero with a warning — never NaN', () => {
    // Only two distinct points, three components: one component cannot hold anything.
    const rows: number[][] = [];
    for (let i = 0; i < 50; i++) rows.push([0, 0], [1, 2]);
    for (const covarianceType of ['full', 'diag', 'spherical', 'tied'] as const) {
      const fit = fitMixture(matrix(rows), { ...fitSettings, components: 3, covarianceType, restarts: 1 });
      expect(fit.warnings.join('\n')).toMatch(/Component \d emptied at iteration \d+ and was re-seeded at row \d+/);
      for (const array of [fit.model.weights, fit.model.means, fit.model.covariances, fit.model.precisionCholesky]) {
        expect([...array].every(Number.isFinite)).toBe(true);
      }
      expect(Number.isFinite(fit.logLikelihood) && Number.isFinite(fit.bic) && Number.isFinite(fit.icl)).toBe(true);
    }
  });

  it('regularises a singular covariance and says so', () => {
    // All rows on the line y = 2x: the covariance is singular without regularisation.
    const line = matrix(Array.from({ length: 40 }, (_, i) => [i, 2 * i]));
    const fit = fitMixture(line, { ...fitSettings, components: 1, covarianceType: 'full', regularization: 0 });
    expect(fit.warnings.join('\n')).toMatch(/Covariance of component 1 was singular at iteration 0; .* was added to its diagonal/);
    expect(Number.isFinite(fit.logLikelihood)).toBe(true);
    expect([...fit.model.precisionCholesky].every(Number.isFinite)).toBe(true);
  });
});
