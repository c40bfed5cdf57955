import { describe, expect, it } from 'vitest';
import { fitMixture, modelFromJSON, modelToJSON, scoreRows } from '../../src/model/index.js';
import { fitSettings, referenceData, sameBits } from './support.js';

const iris = referenceData('iris'); // Fisher (1936), R's datasets::iris

describe('model JSON', () => {
  it('round-trips every number exactly, through text too', () => {
    for (const covarianceType of ['full', 'diag', 'spherical', 'tied'] as const) {
      const model = fitMixture(iris, { ...fitSettings, components: 3, covarianceType }).model;
      const restored = modelFromJSON(JSON.parse(JSON.stringify(modelToJSON(model))));
      expect(restored.covarianceType).toBe(covarianceType);
      for (const key of ['weights', 'means', 'covariances', 'precisionCholesky'] as const) {
        expect(sameBits(model[key], restored[key])).toBe(true);
      }
      expect(sameBits(scoreRows(model, iris).posteriors, scoreRows(restored, iris).posteriors)).toBe(true);
    }
  });

  it('names what is wrong with a damaged model', () => {
    const json = modelToJSON(fitMixture(iris, { ...fitSettings, components: 2, covarianceType: 'diag' }).model);
    expect(() => modelFromJSON({ ...json, format: 'other' })).toThrow(/Not a Spendmix mixture model/);
    expect(() => modelFromJSON({ ...json, covarianceType: 'round' })).toThrow(/unknown covariance type "round"/);
    expect(() => modelFromJSON({ ...json, weights: [0.5] })).toThrow(/"weights" must be 2 finite numbers/);
    expect(() => modelFromJSON({ ...json, means: [json.means[0], [1, 2, 'x', 4]] })).toThrow(/"means\[1\]"/);
  });

  it('accepts covariances symmetric only to rounding, refuses asymmetric or indefinite ones', () => {
    const json = modelToJSON(fitMixture(iris, { ...fitSettings, components: 2, covarianceType: 'full' }).model);
    const withCovariance = (c: number, i: number, j: number, value: number) => {
      const covariances = json.covariances.map((matrix) => matrix.map((row) => [...row]));
      covariances[c][i][j] = value;
      return { ...json, covariances };
    };
    // Written by another program (e.g. numpy), the two triangles can differ in the last bit.
    const original = json.covariances[0][2][0];
    const rounded = modelFromJSON(withCovariance(0, 0, 2, original * (1 + 4e-16)));
    expect(rounded.covariances[0 * 16 + 2 * 4 + 0]).toBe(original);
    expect(() => modelFromJSON(withCovariance(0, 0, 2, original + 1))).toThrow(
      /"covariances\[0\]" is not symmetric \(entries \[2\]\[0\] and \[0\]\[2\] differ\)/,
    );
    expect(() => modelFromJSON(withCovariance(1, 1, 1, -1))).toThrow(/not usable: Covariance matrix of component 2 is not positive definite/);
  });
});
