import { InputError } from '../errors.js';
import { parameterCount } from './criteria.js';
import { covarianceTypes, initMethods, type DataMatrix, type FitOptions, type MissingPolicy } from './types.js';

/** Fit options checked, with the missing-value policy spelled out (what a worker thread receives). */
export type ResolvedFitOptions = Required<Omit<FitOptions, 'signal' | 'onProgress'>>;

const LISTED_ROWS = 10;

export function columnName(data: DataMatrix, column: number): string {
  const name = data.columnNames?.[column];
  return name ? `"${name}" (column ${column + 1})` : `column ${column + 1}`;
}

function listRows(rows: number[]): string {
  const shown = rows.slice(0, LISTED_ROWS).map((row) => row + 1).join(', ');
  return rows.length > LISTED_ROWS ? `${shown} and ${rows.length - LISTED_ROWS} more` : shown;
}

/**
 * Checks the options (every run setting is the caller's: the engine fills in none of them) and
 * throws InputError naming the option and the allowed values.
 */
export function resolveFitOptions(options: FitOptions): ResolvedFitOptions {
  const resolved: ResolvedFitOptions = {
    components: options.components,
    covarianceType: options.covarianceType,
    restarts: options.restarts,
    seed: options.seed,
    tol: options.tol,
    maxIterations: options.maxIterations,
    regularization: options.regularization,
    init: options.init,
    missing: options.missing ?? 'reject',
  };
  if (!Number.isInteger(resolved.components) || resolved.components < 1) {
    throw new InputError(`The number of components must be a whole number ≥ 1; got ${String(options.components)}.`);
  }
  if (!covarianceTypes.includes(resolved.covarianceType)) {
    throw new InputError(`Unknown covariance structure "${String(resolved.covarianceType)}"; use one of ${covarianceTypes.join(', ')}.`);
  }
  if (!Number.isInteger(resolved.restarts) || resolved.restarts < 1) throw new InputError(`restarts must be a whole number ≥ 1; got ${resolved.restarts}.`);
  if (!Number.isSafeInteger(resolved.seed)) throw new InputError(`seed must be a whole number; got ${resolved.seed}.`);
  if (!(resolved.tol >= 0) || !Number.isFinite(resolved.tol)) throw new InputError(`tol must be a finite number ≥ 0; got ${resolved.tol}.`);
  if (!Number.isInteger(resolved.maxIterations) || resolved.maxIterations < 1) {
    throw new InputError(`maxIterations must be a whole number ≥ 1; got ${resolved.maxIterations}.`);
  }
  if (!(resolved.regularization >= 0) || !Number.isFinite(resolved.regularization)) {
    throw new InputError(`regularization must be a finite number ≥ 0; got ${resolved.regularization}.`);
  }
  if (!initMethods.includes(resolved.init)) throw new InputError(`Unknown initialisation "${String(resolved.init)}"; use one of ${initMethods.join(', ')}.`);
  if (resolved.missing !== 'reject' && resolved.missing !== 'em') {
    throw new InputError(`Unknown missing-value policy "${String(resolved.missing)}"; use reject or em.`);
  }
  return resolved;
}

/** Shape check shared by fitting and scoring. */
export function checkShape(data: DataMatrix): void {
  if (!Number.isInteger(data.rows) || data.rows < 1 || !Number.isInteger(data.cols) || data.cols < 1) {
    throw new InputError(`The data needs at least one row and one column; got ${data.rows} × ${data.cols}.`);
  }
  if (!(data.values instanceof Float64Array) || data.values.length !== data.rows * data.cols) {
    throw new InputError(`The data values must be a Float64Array of rows × cols = ${data.rows * data.cols} numbers.`);
  }
}

/**
 * The one row check of fitting and scoring. Cells that cannot be used: with missing = 'reject'
 * every non-finite cell; with 'em' (fitting with missing values, and every scoring) only
 * ±Infinity and rows with no observed value at all. Throws InputError listing the rows
 * (1-based). Returns whether any value is missing (NaN).
 */
export function checkCells(data: DataMatrix, missing: MissingPolicy): boolean {
  const { values, rows, cols } = data;
  const badRows: number[] = [];
  const emptyRows: number[] = [];
  let anyMissing = false;
  for (let row = 0; row < rows; row++) {
    let bad = false;
    let observed = 0;
    for (let col = 0; col < cols; col++) {
      const value = values[row * cols + col];
      if (value !== value) {
        anyMissing = true;
        if (missing === 'reject') bad = true;
      } else if (value === Infinity || value === -Infinity) {
        bad = true;
      } else {
        observed++;
      }
    }
    if (bad) badRows.push(row);
    else if (observed === 0) emptyRows.push(row);
  }
  if (badRows.length > 0) {
    const what = missing === 'reject' ? 'NaN or infinite values' : 'infinite values';
    const hint = missing === 'reject' ? ' Remove them, or fit with missing values allowed (EM over the observed features).' : '';
    throw new InputError(`${badRows.length} row(s) hold ${what}: row ${listRows(badRows)}.${hint}`, { rows: badRows.map((row) => row + 1) });
  }
  if (emptyRows.length > 0) {
    throw new InputError(`${emptyRows.length} row(s) have no observed value at all: row ${listRows(emptyRows)}.`, {
      rows: emptyRows.map((row) => row + 1),
    });
  }
  return anyMissing;
}

/** Throws InputError naming every feature whose observed values are all equal. */
export function checkFeatureVariance(data: DataMatrix): void {
  const { values, rows, cols } = data;
  const constant: number[] = [];
  for (let col = 0; col < cols; col++) {
    let first = NaN;
    let varies = false;
    for (let row = 0; row < rows && !varies; row++) {
      const value = values[row * cols + col];
      if (value !== value) continue;
      if (first !== first) first = value;
      else if (value !== first) varies = true;
    }
    if (!varies) constant.push(col);
  }
  if (constant.length > 0) {
    throw new InputError(
      `Feature ${constant.map((col) => columnName(data, col)).join(', ')} has zero variance (every value is the same); leave it out of the model.`,
      { columns: constant.map((col) => col + 1) },
    );
  }
}

/** n must exceed k and the number of free parameters, or the fit and its BIC mean nothing. */
export function checkEnoughRows(rows: number, cols: number, options: Pick<ResolvedFitOptions, 'components' | 'covarianceType'>): void {
  const parameters = parameterCount(options.components, cols, options.covarianceType);
  if (rows <= parameters || rows < options.components) {
    throw new InputError(
      `${rows} rows are too few for ${options.components} component(s) with ${options.covarianceType} covariance in ${cols} dimension(s): ` +
        `the model has ${parameters} free parameters, so at least ${parameters + 1} rows are needed.`,
    );
  }
}

/** All checks a fit needs, in the order a user fixes them; returns whether values are missing. */
export function validateFitInput(data: DataMatrix, options: ResolvedFitOptions): boolean {
  checkShape(data);
  const anyMissing = checkCells(data, options.missing);
  checkFeatureVariance(data);
  checkEnoughRows(data.rows, data.cols, options);
  return anyMissing;
}
