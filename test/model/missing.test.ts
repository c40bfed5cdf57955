import { describe, expect, it } from 'vitest';
import { restartStream } from '../../src/model/random.js';
import { fitMixture, imputeMissing, scoreRows, type DataMatrix, type MixtureModel } from '../../src/model/index.js';
import { fitSettings, referenceData } from './support.js';

// Old Faithful: R's datasets::faithful (Azzalini & Bowman 1990).
const faithful = referenceData('faithful');

/** The data with `share` of its cells set to NaN at random (seeded), never a whole row. */
function removeAtRandom(data: DataMatrix, share: number, seed: number): DataMatrix {
  const values = Float64Array.from(data.values);
  const random = restartStream(seed, 0);
  const target = Math.round(share * data.rows * data.cols);
  let removed = 0;
  while (removed < target) {
    const row = random.integer(0, data.rows - 1);
    const col = random.integer(0, data.cols - 1);
    const cell = row * data.cols + col;
    if (values[cell] !== values[cell]) continue;
    let observed = 0;
    for (let c = 0; c < data.cols; c++) if (values[row * data.cols + c] === values[row * data.cols + c]) observed++;
    if (observed < 2) continue;
    values[cell] = NaN;
    removed++;
  }
  return { ...data, values };
}

/** Components ordered by their first mean, so two fits can be compared component by component. */
function ordered(model: MixtureModel): number[] {
  return Array.from({ length: model.components }, (_, c) => c).sort((a, b) => model.means[a * model.dimensions] - model.means[b * model.dimensions]);
}

describe('missing values (EM over observed coordinates, Ghahramani & Jordan 1994)', () => {
  const complete = fitMixture(faithful, { ...fitSettings, components: 2, covarianceType: 'full', restarts: 5 });
  const holed = removeAtRandom(faithful, 0.1, 42);
  const partial = fitMixture(holed, { ...fitSettings, components: 2, covarianceType: 'full', restarts: 5, missing: 'em' });

  it('refuses NaN unless asked to fit missing values', () => {
    expect(() => fitMixture(holed, { ...fitSettings, components: 2, covarianceType: 'full' })).toThrow(/NaN or infinite values/);
  });

  it('with 10% of Old Faithful removed at random, stays close to the complete-data fit', () => {
    const standardDeviations = [1.141371, 13.59497]; // Rscript (r-base-core 4.2.2): sd(faithful$eruptions), sd(faithful$waiting)
    const a = ordered(complete.model);
    const b = ordered(partial.model);
    for (let i = 0; i < 2; i++) {
      expect(Math.abs(complete.model.weights[a[i]] - partial.model.weights[b[i]])).toBeLessThan(0.03);
      for (let j = 0; j < 2; j++) {
        const gap = Math.abs(complete.model.means[a[i] * 2 + j] - partial.model.means[b[i] * 2 + j]);
        expect(gap / standardDeviations[j]).toBeLessThan(0.1);
      }
    }
    // The partial-data model explains the complete data almost as well as the complete-data fit.
    const scored = scoreRows(partial.model, faithful);
    const logLikelihood = scored.logDensity.reduce((sum, value) => sum + value, 0);
    expect(logLikelihood).toBeLessThanOrEqual(complete.logLikelihood + 1e-6);
    expect((complete.logLikelihood - logLikelihood) / faithful.rows).toBeLessThan(0.02);
    expect([...partial.model.covariances].every(Number.isFinite)).toBe(true);
  });

  it('marks the rows scored on partial data and keeps their posteriors proper', () => {
    const scored = scoreRows(partial.model, holed);
    for (let row = 0; row < holed.rows; row++) {
      const hasMissing = Number.isNaN(holed.values[row * 2]) || Number.isNaN(holed.values[row * 2 + 1]);
      expect(scored.partial[row]).toBe(hasMissing ? 1 : 0);
      expect(scored.posteriors[row * 2] + scored.posteriors[row * 2 + 1]).toBeCloseTo(1, 12);
      expect(Number.isFinite(scored.logDensity[row])).toBe(true);
    }
  });

  it('imputes removed values near the originals (waiting time from eruption length)', () => {
    const imputed = imputeMissing(partial.model, holed);
    let squared = 0;
    let count = 0;
    for (let cell = 0; cell < holed.values.length; cell++) {
      if (!Number.isNaN(holed.values[cell])) {
        expect(imputed.values[cell]).toBe(holed.values[cell]);
        continue;
      }
      if (cell % 2 === 1) {
        squared += (imputed.values[cell] - faithful.values[cell]) ** 2;
        count++;
      }
    }
    // Eruption length predicts waiting well: the imputation error is far below waiting's spread (sd ≈ 13.6).
    expect(Math.sqrt(squared / count)).toBeLessThan(8);
  });

  it('is reproducible and reports a log-likelihood over observed values only', () => {
    const again = fitMixture(holed, { ...fitSettings, components: 2, covarianceType: 'full', restarts: 5, missing: 'em' });
    expect(again.logLikelihood).toBe(partial.logLikelihood);
    expect(partial.logLikelihood).toBeGreaterThan(complete.logLikelihood); // fewer observed values, fewer density terms
  });

  it('works for every structure', () => {
    for (const covarianceType of ['diag', 'spherical', 'tied'] as const) {
      const fit = fitMixture(holed, { ...fitSettings, components: 2, covarianceType, missing: 'em' });
      const reference = fitMixture(faithful, { ...fitSettings, components: 2, covarianceType });
      // Scored on the complete data, the partial-data model is nearly as good as the complete-data one.
      const scored = scoreRows(fit.model, faithful).logDensity.reduce((sum, value) => sum + value, 0) / faithful.rows;
      expect(reference.meanLogLikelihood - scored).toBeLessThan(0.03);
      expect(reference.meanLogLikelihood - scored).toBeGreaterThan(-1e-6);
      expect([...fit.model.covariances].every(Number.isFinite)).toBe(true);
    }
  });
});
