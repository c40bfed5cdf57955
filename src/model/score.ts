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
  const topSegment = new Int32Array(n);
  const secondSegment = new Int32Array(n);
  const confidence = new Float64Array(n);
  const margin = new Float64Array(n);
  const partial = new Uint8Array(n);
  for (const pattern of patterns) if (pattern.missing.length > 0) for (const row of pattern.rows) partial[row] = 1;
  for (let row = 0; row < n; row++) {
    let top = 0;
    let second = -1;
    for (let c = 1; c < k; c++) {
      const value = posteriors[row * k + c];
      if (value > posteriors[row * k + top]) {
        second = top;
        top = c;
      } else if (second < 0 || value > posteriors[row * k + second]) {
        second = c;
      }
    }
    topSegment[row] = top;
    secondSegment[row] = second;
    confidence[row] = posteriors[row * k + top];
    margin[row] = second < 0 ? 1 : posteriors[row * k + top] - posteriors[row * k + second];
  }
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
