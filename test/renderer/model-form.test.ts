import { describe, expect, it } from 'vitest';
import { startRunInput, type ModelOptions, type RunSettings } from '../../src/api/contract.js';
import { errorsFromIssues, formFromSettings, readNumber, toStartRunInput } from '../../renderer/src/lib/model-form.js';

/** What modelOptions sends: the schema's defaults. */
const defaults: RunSettings = startRunInput.parse({ asOf: '2026-11-30' });
const transform = (feature: string, log1p: boolean) => ({ feature, log1p, cubeRoot: false, clipLowerPercentile: null, clipUpperPercentile: null, zScore: true });
const options: ModelOptions = {
  features: [
    { name: 'spend_per_month', label: 'spend per month', unit: 'EUR per month', meaning: '', inDefaultSet: true, defaultTransform: transform('spend_per_month', true) },
    { name: 'fresh_share', label: 'fresh share', unit: 'share', meaning: '', inDefaultSet: false, defaultTransform: transform('fresh_share', false) },
  ],
  covarianceTypes: ['full', 'diag', 'spherical', 'tied'],
  defaults,
};

describe('Model settings form', () => {
  it('starts from the defaults and turns into the startRun input unchanged', () => {
    const form = formFromSettings(options, defaults, '2026-11-30');
    expect(form.features.map((f) => [f.feature, f.selected, f.log1p, f.zScore])).toEqual([
      ['spend_per_month', true, true, true],
      ['fresh_share', false, false, true],
    ]);
    const { input, errors } = toStartRunInput(form);
    expect(errors).toEqual({});
    // Sent back through the schema, the form's input is the defaults again (with the feature chosen).
    expect(startRunInput.parse(input)).toEqual({ ...defaults, features: [transform('spend_per_month', true)] });
  });

  it('keeps the settings it does not show (set on the command line or in a settings file)', () => {
    const previous: RunSettings = { ...defaults, tol: 1e-5, maxIterations: 500, regularization: 1e-4, init: 'random', reviewMoversBelowConfidence: 0.9, freshCategories: ['bakery'] };
    const { input } = toStartRunInput(formFromSettings(options, previous, '2026-11-30'));
    expect(input).toMatchObject({ tol: 1e-5, maxIterations: 500, regularization: 1e-4, init: 'random', reviewMoversBelowConfidence: 0.9, freshCategories: ['bakery'] });
  });

  it('sends the segment count (automatic or a number) and the review capacity', () => {
    const previous: RunSettings = { ...defaults, segmentCount: 3, reviewCapacity: 50 };
    const form = formFromSettings(options, previous, '2026-11-30');
    expect([form.segmentMode, form.segmentCount, form.reviewCapacity]).toEqual(['fixed', '3', '50']);
    expect(toStartRunInput(form).input).toMatchObject({ segmentCount: 3, reviewCapacity: 50 });
    expect(toStartRunInput({ ...form, segmentMode: 'auto' }).input).toMatchObject({ segmentCount: 'auto' });
    const { errors } = toStartRunInput({ ...form, segmentCount: 'three', reviewCapacity: '' });
    expect(Object.keys(errors).sort()).toEqual(['reviewCapacity', 'segmentCount']);
  });

  it('sends the fit sample: empty fits on all placed customers, a number on a seeded sample of that many', () => {
    const form = formFromSettings(options, { ...defaults, fitSample: 50_000 }, '2026-11-30');
    expect(form.fitSample).toBe('50000');
    expect(toStartRunInput(form).input).toMatchObject({ fitSample: 50_000 });
    expect(toStartRunInput({ ...form, fitSample: ' ' }).input).toMatchObject({ fitSample: null });
    expect(formFromSettings(options, { ...defaults, fitSample: null }, '2026-11-30').fitSample).toBe('');
    expect(Object.keys(toStartRunInput({ ...form, fitSample: 'half' }).errors)).toEqual(['fitSample']);
  });

  it('keeps a previous run\'s features, transforms and fixed k', () => {
    const previous: RunSettings = { ...defaults, k: 3, covariance: 'diag', features: [{ feature: 'fresh_share', log1p: false, cubeRoot: true, clipLowerPercentile: 1, clipUpperPercentile: 99, zScore: true }] };
    const form = formFromSettings(options, previous, '2026-10-31');
    expect(form.kMode).toBe('fixed');
    expect(form.features.find((f) => f.feature === 'fresh_share')).toMatchObject({ selected: true, log1p: false, cubeRoot: true, clip: true, clipLower: '1', clipUpper: '99' });
    expect(form.features.find((f) => f.feature === 'spend_per_month')?.selected).toBe(false);
    const { input } = toStartRunInput(form);
    expect(input).toMatchObject({ k: 3, covariance: 'diag', asOf: '2026-10-31' });
    expect(input.features).toEqual([{ feature: 'fresh_share', log1p: false, cubeRoot: true, clipLowerPercentile: 1, clipUpperPercentile: 99, zScore: true }]);
  });

  it('reads numbers in either decimal style and flags what is not a number', () => {
    expect(readNumber('0,65')).toBe(0.65);
    expect(readNumber(' 12 ')).toBe(12);
    expect(readNumber('1e3')).toBeNull();
    expect(readNumber('')).toBeNull();
    const form = { ...formFromSettings(options, defaults, 'soon'), restarts: 'five', borderlineConfidence: '0,65' };
    const { input, errors } = toStartRunInput(form);
    expect(errors).toMatchObject({ restarts: 'enter a number', asOf: 'enter a date as YYYY-MM-DD' });
    expect(input.borderlineConfidence).toBe(0.65);
  });

  it('asks for at least one feature', () => {
    const form = formFromSettings(options, defaults, '2026-11-30');
    form.features = form.features.map((f) => ({ ...f, selected: false }));
    expect(toStartRunInput(form).errors.features).toBe('choose at least one feature');
  });

  it('puts the core\'s zod issues beside the right fields', () => {
    const form = formFromSettings(options, defaults, '2026-11-30');
    expect(errorsFromIssues([{ path: 'kMin', message: 'kMin must not exceed kMax' }, { path: 'features.0.clipUpperPercentile', message: 'too big' }], form)).toEqual({
      kMin: 'kMin must not exceed kMax',
      'features.spend_per_month': 'too big',
    });
  });
});
