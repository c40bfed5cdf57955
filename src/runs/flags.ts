/**
 * Borderline and atypical flags (DESIGN.md §5): borderline = confidence below 0.70 or margin below
 * 0.20; atypical = log density below the 1st percentile of the run's placed customers. Both
 * thresholds are settings.
 */
import { quantile } from '../features/quantiles.js';

export interface FlagThresholds {
  borderlineConfidence: number;
  borderlineMargin: number;
  atypicalPercentile: number;
}

export interface Flags {
  borderline: Uint8Array;
  atypical: Uint8Array;
  /** The log-density cut the percentile gave (customers strictly below it are atypical). */
  atypicalLogDensityBelow: number;
}

export function isBorderline(confidence: number, margin: number, thresholds: FlagThresholds): boolean {
  return confidence < thresholds.borderlineConfidence || margin < thresholds.borderlineMargin;
}

export function computeFlags(
  confidence: Float64Array,
  margin: Float64Array,
  logDensity: Float64Array,
  thresholds: FlagThresholds,
): Flags {
  const n = confidence.length;
  const borderline = new Uint8Array(n);
  const atypical = new Uint8Array(n);
  const cut = thresholds.atypicalPercentile > 0 ? quantile(logDensity, thresholds.atypicalPercentile / 100) : -Infinity;
  for (let i = 0; i < n; i++) {
    borderline[i] = isBorderline(confidence[i], margin[i], thresholds) ? 1 : 0;
    atypical[i] = logDensity[i] < cut ? 1 : 0;
  }
  return { borderline, atypical, atypicalLogDensityBelow: cut };
}
