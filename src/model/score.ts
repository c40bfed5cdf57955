import { InputError } from '../errors.js';
import { groupByMissingPattern, patternExpectationStep } from './missing.js';
import { checkCells, checkShape } from './validate.js';
import type { DataMatrix, Memberships, MixtureModel } from './types.js';

/** Rows a model can score: its width, and any row with at least one finite value (NaN = missing). */
function checkScorable(model: MixtureModel, data: DataMatrix): void {
  checkShape(data);
  if (data.cols !== model.dimensions) {
    throw new InputError(`The model has ${model.dimensions} feature(s) but the data has ${data.cols} column(s).`);
  }
  checkCells(data, 'em');
}

/**
 * The two highest of each row's posteriors (n × k row-major): their columns (the first on ties;
 * second −1 when k = 1), confidence = the highest, margin = highest − second (1 when k = 1).
 */
export function topTwo(posteriors: Float64Array, n: number, k: number): { top: Int32Array; second: Int32Array; confidence: Float64Array; margin: Float64Array } {
  const top = new Int32Array(n);
  const second = new Int32Array(n);
  const confidence = new Float64Array(n);
  const margin = new Float64Array(n);
  for (let row = 0; row < n; row++) {
    let best = 0;
    let runnerUp = -1;
    for (let c = 1; c < k; c++) {
      const value = posteriors[row * k + c];
      if (value > posteriors[row * k + best]) {
        runnerUp = best;
        best = c;
      } else if (runnerUp < 0 || value > posteriors[row * k + runnerUp]) {
        runnerUp = c;
      }
    }
    top[row] = best;
    second[row] = runnerUp;
    confidence[row] = posteriors[row * k + best];
    margin[row] = runnerUp < 0 ? 1 : confidence[row] - posteriors[row * k + runnerUp];
  }
  return { top, second, confidence, margin };
}

/**
 * Posterior membership of each row under a fitted model (DESIGN.md §5): posteriors, the top two
 * segments, confidence (top posterior), margin (top minus second) and log density. A row with
 * NaNs is scored on the marginal Gaussian of its observed features and flagged `partial`.
 */
export function scoreRows(model: MixtureModel, data: DataMatrix): Memberships {
  checkScorable(model, data);
  const { values, rows: n, cols: d } = data;
  const k = model.components;
  const posteriors = new Float64Array(n * k);
  const logDensity = new Float64Array(n);
  const patterns = groupByMissingPattern(values, n, d);
  patternExpectationStep(values, model, patterns, { posteriors, rowLogDensities: logDensity });
  const { top: topSegment, second: secondSegment, confidence, margin } = topTwo(posteriors, n, k);
  const partial = new Uint8Array(n);
  for (const pattern of patterns) if (pattern.missing.length > 0) for (const row of pattern.rows) partial[row] = 1;
  return { rows: n, components: k, posteriors, topSegment, secondSegment, confidence, margin, logDensity, partial };
}

/**
 * Conditional-mean imputation: each NaN becomes Σ_c τ_c E[x_m | x_o, c], with τ the row's
 * posterior given its observed features. Observed values are copied unchanged.
 */
export function imputeMissing(model: MixtureModel, data: DataMatrix): DataMatrix {
  checkScorable(model, data);
  const { values, rows: n, cols: d } = data;
  const imputed = new Float64Array(n * d);
  patternExpectationStep(values, model, groupByMissingPattern(values, n, d), { imputed });
  return { values: imputed, rows: n, cols: d, columnNames: data.columnNames };
}
