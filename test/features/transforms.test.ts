import { describe, expect, it } from 'vitest';
import { quantile } from '../../src/features/quantiles.js';
import { describeTransform, fitTransform, transformColumn, transformValue, untransformValue } from '../../src/features/transforms.js';
import { isInputError } from '../../src/errors.js';

describe('quantiles', () => {
  it('match R quantile() type 7 (its default)', () => {
    // R: quantile(c(1, 2, 3, 4, 100), c(0.1, 0.5, 0.75)) gives 1.4, 3, 4 (r-base-core, type 7 default).
    expect(quantile([1, 2, 3, 4, 100], 0.1)).toBeCloseTo(1.4, 12);
    expect(quantile([100, 4, 3, 2, 1], 0.5)).toBe(3);
    expect(quantile([1, 2, 3, 4, 100], 0.75)).toBe(4);
    expect(quantile([NaN, 5], 0.5)).toBe(5);
  });
});

describe('transforms', () => {
  it('log1p then z-score, worked by hand', () => {
    // log1p of 0, 1, 3, 7 is 0, ln 2, 2 ln 2, 3 ln 2: mean 1.5 ln 2, population sd ln 2 · √1.25,
    // so the z-scores are (0 − 1.5)/√1.25 … = ∓1.3416, ∓0.4472.
    const fitted = fitTransform('spend_per_month', { log1p: true, clipLowerPercentile: null, clipUpperPercentile: null, zScore: true }, [0, 1, 3, 7]);
    expect(fitted.fitted!.mean).toBeCloseTo(1.5 * Math.LN2, 14);
    expect(fitted.fitted!.standardDeviation).toBeCloseTo(Math.LN2 * Math.sqrt(1.25), 14);
    const z = transformColumn('spend_per_month', fitted, [0, 1, 3, 7]);
    const expected = [-1.5, -0.5, 0.5, 1.5].map((v) => v / Math.sqrt(1.25));
    z.forEach((value, i) => expect(value).toBeCloseTo(expected[i], 12));
    expect(untransformValue(fitted, z[3])).toBeCloseTo(7, 12);
    expect(describeTransform(fitted)).toBe('log1p, z-scored');
  });

  it('cube root then z-score, worked by hand, and back to original units', () => {
    // Cube roots of 0, 1, 8, 27, 64 are 0 … 4: mean 2, population sd √2; −8 has the cube root −2.
    const fitted = fitTransform('gaps_since_last_visit', { log1p: false, cubeRoot: true, clipLowerPercentile: null, clipUpperPercentile: null, zScore: true }, [0, 1, 8, 27, 64]);
    expect(fitted.fitted!.mean).toBeCloseTo(2, 14);
    expect(fitted.fitted!.standardDeviation).toBeCloseTo(Math.SQRT2, 14);
    expect(transformValue('gaps_since_last_visit', fitted, 27)).toBeCloseTo(1 / Math.SQRT2, 14);
    expect(transformValue('gaps_since_last_visit', fitted, -8)).toBeCloseTo(-4 / Math.SQRT2, 14);
    expect(untransformValue(fitted, transformValue('gaps_since_last_visit', fitted, 27))).toBeCloseTo(27, 12);
    expect(describeTransform(fitted)).toBe('cube root, z-scored');
  });

  it('reads a transform stored before the cube root existed (no cubeRoot field) as it was fitted', () => {
    const stored = JSON.parse(JSON.stringify(fitTransform('x', { log1p: true, clipLowerPercentile: null, clipUpperPercentile: null, zScore: true }, [1, 2, 5])));
    delete stored.cubeRoot;
    expect(transformValue('x', stored, 5)).toBe(transformValue('x', fitTransform('x', stored, [1, 2, 5]), 5));
    expect(describeTransform(stored)).toBe('log1p, z-scored');
  });

  it('clips at percentiles of the fitted data and reuses the bounds on new data', () => {
    const fitted = fitTransform('x', { log1p: false, clipLowerPercentile: 10, clipUpperPercentile: 75, zScore: false }, [1, 2, 3, 4, 100]);
    expect(fitted.fitted!.clipLower).toBeCloseTo(1.4, 12);
    expect(fitted.fitted!.clipUpper).toBe(4);
    expect(transformValue('x', fitted, 1000)).toBe(4);
    expect(transformValue('x', fitted, -5)).toBeCloseTo(1.4, 12);
    expect(transformValue('x', fitted, 2.5)).toBe(2.5);
    expect(Number.isNaN(transformValue('x', fitted, NaN))).toBe(true);
  });

  it('survives a JSON round trip bit for bit (next month scores with the same numbers)', () => {
    const fitted = fitTransform('x', { log1p: true, clipLowerPercentile: null, clipUpperPercentile: 99, zScore: true }, [3.1, 7.7, 12.25, 40, 0.5]);
    const copy = JSON.parse(JSON.stringify(fitted));
    for (const value of [0, 3.3, 17, 1e6]) expect(transformValue('x', copy, value)).toBe(transformValue('x', fitted, value));
  });

  it('says clearly what is wrong with bad input', () => {
    const bad = [
      () => fitTransform('spend_trend', { log1p: true, clipLowerPercentile: null, clipUpperPercentile: null, zScore: false }, [-1, 0.5]),
      () => fitTransform('x', { log1p: false, clipLowerPercentile: null, clipUpperPercentile: null, zScore: true }, [2, 2, 2]),
      () => fitTransform('x', { log1p: false, clipLowerPercentile: 90, clipUpperPercentile: 10, zScore: false }, [1, 2]),
      () => fitTransform('x', { log1p: false, clipLowerPercentile: null, clipUpperPercentile: 101, zScore: false }, [1, 2]),
      () => fitTransform('x', { log1p: true, cubeRoot: true, clipLowerPercentile: null, clipUpperPercentile: null, zScore: false }, [1, 2]),
    ];
    const messages = bad.map((run) => {
      try {
        run();
        return 'no error';
      } catch (error) {
        expect(isInputError(error)).toBe(true);
        return (error as Error).message;
      }
    });
    expect(messages[0]).toContain('log1p');
    expect(messages[1]).toContain('same value for every customer');
    expect(messages[2]).toContain('below the upper');
    expect(messages[3]).toContain('between 0 and 100');
    expect(messages[4]).toBe('Transform of "x": choose log1p or the cube root, not both.');
  });
});
