/**
 * Per-feature transforms applied before fitting (DESIGN.md §4): log1p or cube root, clipping at
 * percentiles, z-scoring, in that order. Fitting a transform records its parameters (clip bounds, mean,
 * standard deviation) so that next month's data is transformed with exactly the same numbers and
 * the parent's model can score it. NaN (missing) passes through unchanged.
 */
import { InputError } from '../errors.js';
import { quantileOfSorted, sortedFinite } from './quantiles.js';

export interface FeatureTransform {
  log1p: boolean;
  /**
   * Cube root instead of log1p (never both). For a gamma-like spread (waiting times) the cube
   * root is close to normal (Wilson & Hilferty 1931), where a log leaves a long left tail.
   * Absent in transforms stored before it existed: read as false.
   */
  cubeRoot?: boolean;
  /** Clip below/above these percentiles (0–100) of the values after log1p or cube root; null = no clipping on that side. */
  clipLowerPercentile: number | null;
  clipUpperPercentile: number | null;
  zScore: boolean;
  /** Parameters found when fitted; absent in a specification that has not been fitted yet. */
  fitted?: FittedTransformParameters;
}

export interface FittedTransformParameters {
  clipLower: number | null;
  clipUpper: number | null;
  /** Mean and standard deviation after log1p or cube root and clipping (0 and 1 when zScore is off). */
  mean: number;
  standardDeviation: number;
}

export const identityTransform: FeatureTransform = { log1p: false, clipLowerPercentile: null, clipUpperPercentile: null, zScore: false };
export const logZTransform: FeatureTransform = { log1p: true, clipLowerPercentile: null, clipUpperPercentile: null, zScore: true };
export const zTransform: FeatureTransform = { log1p: false, clipLowerPercentile: null, clipUpperPercentile: null, zScore: true };

/** Checks a transform specification from the user; throws InputError naming the feature. */
export function validateTransform(feature: string, transform: FeatureTransform): FeatureTransform {
  const checkPercentile = (side: string, value: number | null) => {
    if (value !== null && !(Number.isFinite(value) && value >= 0 && value <= 100)) {
      throw new InputError(`Transform of "${feature}": the ${side} clipping percentile must be between 0 and 100; got ${value}.`);
    }
  };
  checkPercentile('lower', transform.clipLowerPercentile);
  checkPercentile('upper', transform.clipUpperPercentile);
  if (transform.log1p && transform.cubeRoot) {
    throw new InputError(`Transform of "${feature}": choose log1p or the cube root, not both.`);
  }
  if (
    transform.clipLowerPercentile !== null &&
    transform.clipUpperPercentile !== null &&
    transform.clipLowerPercentile >= transform.clipUpperPercentile
  ) {
    throw new InputError(`Transform of "${feature}": the lower clipping percentile must be below the upper one.`);
  }
  return {
    log1p: Boolean(transform.log1p),
    cubeRoot: Boolean(transform.cubeRoot),
    clipLowerPercentile: transform.clipLowerPercentile ?? null,
    clipUpperPercentile: transform.clipUpperPercentile ?? null,
    zScore: Boolean(transform.zScore),
  };
}

function applyLog(feature: string, value: number): number {
  if (value <= -1) {
    throw new InputError(
      `Feature "${feature}" has the value ${value}, which log1p cannot take (it needs values above −1); turn off its log transform.`,
    );
  }
  return Math.log1p(value);
}

/** The shaping step of a transform (log1p, cube root or none) on one value in original units. */
function shapeValue(feature: string, transform: FeatureTransform, value: number): number {
  if (transform.log1p) return applyLog(feature, value);
  return transform.cubeRoot ? Math.cbrt(value) : value;
}

function clamp(value: number, lower: number | null, upper: number | null): number {
  if (lower !== null && value < lower) return lower;
  if (upper !== null && value > upper) return upper;
  return value;
}

/** Fits the transform's parameters on `values` (original units) and returns the fitted transform. */
export function fitTransform(feature: string, spec: FeatureTransform, values: ArrayLike<number>): FeatureTransform {
  const transform = validateTransform(feature, spec);
  const shaped = new Float64Array(values.length);
  for (let i = 0; i < values.length; i++) {
    const value = values[i];
    shaped[i] = Number.isNaN(value) ? NaN : shapeValue(feature, transform, value);
  }
  const sorted = transform.clipLowerPercentile !== null || transform.clipUpperPercentile !== null ? sortedFinite(shaped) : null;
  const clipLower = sorted && transform.clipLowerPercentile !== null ? quantileOfSorted(sorted, transform.clipLowerPercentile / 100) : null;
  const clipUpper = sorted && transform.clipUpperPercentile !== null ? quantileOfSorted(sorted, transform.clipUpperPercentile / 100) : null;
  let mean = 0;
  let standardDeviation = 1;
  if (transform.zScore) {
    let count = 0;
    let sum = 0;
    for (let i = 0; i < shaped.length; i++) {
      if (Number.isNaN(shaped[i])) continue;
      sum += clamp(shaped[i], clipLower, clipUpper);
      count++;
    }
    if (count === 0) throw new InputError(`Feature "${feature}" has no values to fit its transform on.`);
    mean = sum / count;
    let squares = 0;
    for (let i = 0; i < shaped.length; i++) {
      if (Number.isNaN(shaped[i])) continue;
      const centred = clamp(shaped[i], clipLower, clipUpper) - mean;
      squares += centred * centred;
    }
    // Population standard deviation, as scikit-learn's StandardScaler uses (from memory).
    standardDeviation = Math.sqrt(squares / count);
    if (!(standardDeviation > 0)) {
      throw new InputError(`Feature "${feature}" has the same value for every customer, so it cannot be z-scored; leave it out of the model.`);
    }
  }
  return { ...transform, fitted: { clipLower, clipUpper, mean, standardDeviation } };
}

/** Applies a fitted transform to one value in original units. */
export function transformValue(feature: string, transform: FeatureTransform, value: number): number {
  const fitted = transform.fitted;
  if (!fitted) throw new Error(`Transform of "${feature}" has not been fitted.`);
  if (Number.isNaN(value)) return NaN;
  const shaped = shapeValue(feature, transform, value);
  return (clamp(shaped, fitted.clipLower, fitted.clipUpper) - fitted.mean) / fitted.standardDeviation;
}

/** Applies a fitted transform to a column (original units) into a new Float64Array. */
export function transformColumn(feature: string, transform: FeatureTransform, values: ArrayLike<number>): Float64Array {
  const out = new Float64Array(values.length);
  for (let i = 0; i < values.length; i++) out[i] = transformValue(feature, transform, values[i]);
  return out;
}

/**
 * Maps a transformed value back to original units (clipping cannot be undone: a clipped value
 * comes back as the clip bound).
 */
export function untransformValue(transform: FeatureTransform, value: number): number {
  const fitted = transform.fitted;
  if (!fitted) throw new Error('Transform has not been fitted.');
  const shaped = value * fitted.standardDeviation + fitted.mean;
  if (transform.log1p) return Math.expm1(shaped);
  return transform.cubeRoot ? shaped * shaped * shaped : shaped;
}

/** Human words for a transform, e.g. "log1p, clipped at the 99th percentile, z-scored". */
export function describeTransform(transform: FeatureTransform): string {
  const parts: string[] = [];
  if (transform.log1p) parts.push('log1p');
  if (transform.cubeRoot) parts.push('cube root');
  if (transform.clipLowerPercentile !== null) parts.push(`clipped below the ${transform.clipLowerPercentile}th percentile`);
  if (transform.clipUpperPercentile !== null) parts.push(`clipped above the ${transform.clipUpperPercentile}th percentile`);
  if (transform.zScore) parts.push('z-scored');
  return parts.length ? parts.join(', ') : 'as is';
}
