import { logDensityConstant, marginalPrecisionFactor, normalizeLogWeights, whitenedSquaredNorm } from './gaussian.js';
import type { ExpectationSummary, SufficientStatistics } from './estep.js';
import type { MixtureModel } from './types.js';

/** Rows sharing one pattern of observed (o) and missing (m) features, as 0-based column indices. */
export interface MissingPattern {
  observed: Int32Array;
  missing: Int32Array;
  rows: Int32Array;
}

/**
 * One component's Gaussian restricted to a pattern:
 * - logConstant: log w + log|Σ_oo|^(-1/2) − (|o|/2) log 2π
 * - factor: |o| × |o| lower-triangular W with W Σ_oo Wᵀ = I
 * - regression: |m| × |o|, B = Σ_mo Σ_oo⁻¹ (E[x_m | x_o] = μ_m + B (x_o − μ_o))
 * - conditionalCovariance: |m| × |m|, Σ_mm − B Σ_om
 */
interface PatternComponent {
  logConstant: number;
  factor: Float64Array;
  regression: Float64Array;
  conditionalCovariance: Float64Array;
}

/** Groups rows by which features are NaN, in order of first appearance (so results are deterministic). */
export function groupByMissingPattern(values: Float64Array, n: number, d: number): MissingPattern[] {
  const byKey = new Map<string, number[]>();
  const key = new Array<string>(d);
  for (let row = 0; row < n; row++) {
    for (let a = 0; a < d; a++) key[a] = values[row * d + a] !== values[row * d + a] ? 'm' : 'o';
    const text = key.join('');
    let rows = byKey.get(text);
    if (!rows) byKey.set(text, (rows = []));
    rows.push(row);
  }
  const patterns: MissingPattern[] = [];
  for (const [text, rows] of byKey) {
    const observed: number[] = [];
    const missing: number[] = [];
    for (let a = 0; a < d; a++) (text[a] === 'o' ? observed : missing).push(a);
    patterns.push({ observed: Int32Array.from(observed), missing: Int32Array.from(missing), rows: Int32Array.from(rows) });
  }
  return patterns;
}

function patternComponents(model: MixtureModel, pattern: MissingPattern): PatternComponent[] {
  const { components: k, dimensions: d, covariances, weights } = model;
  const { observed, missing } = pattern;
  const o = observed.length;
  const m = missing.length;
  const result: PatternComponent[] = [];
  for (let c = 0; c < k; c++) {
    const base = c * d * d;
    const factor = marginalPrecisionFactor(covariances, base, d, observed);
    if (!factor) throw new Error(`Covariance of component ${c + 1} is not positive definite on the observed features.`);
    // Σ_oo⁻¹ = Wᵀ W.
    const precision = new Float64Array(o * o);
    for (let i = 0; i < o; i++) {
      for (let j = 0; j < o; j++) {
        let sum = 0;
        for (let r = Math.max(i, j); r < o; r++) sum += factor[r * o + i] * factor[r * o + j];
        precision[i * o + j] = sum;
      }
    }
    const regression = new Float64Array(m * o);
    for (let i = 0; i < m; i++) {
      for (let j = 0; j < o; j++) {
        let sum = 0;
        for (let r = 0; r < o; r++) sum += covariances[base + missing[i] * d + observed[r]] * precision[r * o + j];
        regression[i * o + j] = sum;
      }
    }
    const conditionalCovariance = new Float64Array(m * m);
    for (let i = 0; i < m; i++) {
      for (let j = 0; j < m; j++) {
        let sum = covariances[base + missing[i] * d + missing[j]];
        for (let r = 0; r < o; r++) sum -= regression[i * o + r] * covariances[base + observed[r] * d + missing[j]];
        conditionalCovariance[i * m + j] = sum;
      }
    }
    result.push({
      logConstant: logDensityConstant(Math.log(weights[c]), factor, 0, o),
      factor,
      regression,
      conditionalCovariance,
    });
  }
  return result;
}

/** Optional per-row outputs of patternExpectationStep (each n-sized or n × k / n × d, row-major). */
export interface PatternOutputs {
  statistics?: SufficientStatistics | null;
  posteriors?: Float64Array | null;
  rowLogDensities?: Float64Array | null;
  /** n × d: observed values copied, missing ones replaced by Σ_c τ_c E[x_m | x_o, c]. */
  imputed?: Float64Array | null;
}

/**
 * E-step for rows that may have missing features (Ghahramani & Jordan 1994): each row's
 * component densities are the marginals of its observed features; the sufficient statistics are
 * expectations given x_o — E[x_m | x_o, c] = μ_m + B (x_o − μ_o) in the first moments and
 * that times itself plus the conditional covariance Σ_mm − B Σ_om in the second (full
 * matrices; the statistics' centers must equal the model's means).
 */
export function patternExpectationStep(
  values: Float64Array,
  model: MixtureModel,
  patterns: readonly MissingPattern[],
  outputs: PatternOutputs,
): ExpectationSummary {
  const { components: k, dimensions: d, means } = model;
  const { statistics, posteriors, rowLogDensities, imputed } = outputs;
  const logDensities = new Float64Array(k);
  const expected = new Float64Array(k * d); // x̂ − μ_c per component
  const deviation = new Float64Array(d); // x_o − μ_o of one component
  let logLikelihood = 0;
  let sumLogMaxPosterior = 0;
  let worstRow = -1;
  let worstLogDensity = Infinity;
  for (const pattern of patterns) {
    const terms = patternComponents(model, pattern);
    const { observed, missing, rows } = pattern;
    const o = observed.length;
    const m = missing.length;
    for (let index = 0; index < rows.length; index++) {
      const row = rows[index];
      const base = row * d;
      let best = -Infinity;
      for (let c = 0; c < k; c++) {
        const { factor, regression, logConstant } = terms[c];
        const offset = c * d;
        for (let i = 0; i < o; i++) deviation[i] = values[base + observed[i]] - means[offset + observed[i]];
        for (let i = 0; i < o; i++) expected[offset + observed[i]] = deviation[i];
        for (let i = 0; i < m; i++) {
          let sum = 0;
          for (let j = 0; j < o; j++) sum += regression[i * o + j] * deviation[j];
          expected[offset + missing[i]] = sum;
        }
        logDensities[c] = logConstant - 0.5 * whitenedSquaredNorm(factor, 0, deviation, o);
        if (logDensities[c] > best) best = logDensities[c];
      }
      const rowLogDensity = normalizeLogWeights(logDensities, 0, k); // logDensities now hold the posteriors
      logLikelihood += rowLogDensity;
      sumLogMaxPosterior += best - rowLogDensity;
      if (rowLogDensity < worstLogDensity) {
        worstLogDensity = rowLogDensity;
        worstRow = row;
      }
      if (rowLogDensities) rowLogDensities[row] = rowLogDensity;
      if (imputed) {
        for (let a = 0; a < d; a++) imputed[base + a] = values[base + a];
        for (let i = 0; i < m; i++) imputed[base + missing[i]] = 0;
      }
      for (let c = 0; c < k; c++) {
        const responsibility = logDensities[c];
        if (posteriors) posteriors[row * k + c] = responsibility;
        const offset = c * d;
        if (imputed) for (let i = 0; i < m; i++) imputed[base + missing[i]] += responsibility * (means[offset + missing[i]] + expected[offset + missing[i]]);
        if (!statistics || responsibility === 0) continue;
        statistics.weightSums[c] += responsibility;
        const momentOffset = c * d * d;
        for (let a = 0; a < d; a++) {
          const weighted = responsibility * expected[offset + a];
          statistics.firstMoments[offset + a] += weighted;
          for (let b = 0; b <= a; b++) statistics.secondMoments[momentOffset + a * d + b] += weighted * expected[offset + b];
        }
        const conditional = terms[c].conditionalCovariance;
        for (let i = 0; i < m; i++) {
          for (let j = 0; j < m; j++) {
            if (missing[j] > missing[i]) continue; // lower triangle only
            statistics.secondMoments[momentOffset + missing[i] * d + missing[j]] += responsibility * conditional[i * m + j];
          }
        }
      }
    }
  }
  return { logLikelihood, sumLogMaxPosterior, worstRow, worstLogDensity };
}

/** Column means over observed values, used to fill NaNs for the k-means initialisation only. */
export function meanFilled(values: Float64Array, n: number, d: number): Float64Array {
  const sums = new Float64Array(d);
  const counts = new Float64Array(d);
  for (let row = 0; row < n; row++) {
    for (let a = 0; a < d; a++) {
      const value = values[row * d + a];
      if (value === value) {
        sums[a] += value;
        counts[a]++;
      }
    }
  }
  const filled = Float64Array.from(values);
  for (let i = 0; i < filled.length; i++) if (filled[i] !== filled[i]) filled[i] = sums[i % d] / counts[i % d];
  return filled;
}
