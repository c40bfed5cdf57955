import { readFileSync } from 'node:fs';
import { fileURLToPath } from 'node:url';
import { expect } from 'vitest';
import { InputError } from '../../src/errors.js';
import { modelFromJSON, parseNumericCsv, type CovarianceType, type DataMatrix, type FitOptions, type MixtureModel } from '../../src/model/index.js';

/**
 * The settings the engine's tests fit with unless a test says otherwise: DESIGN.md §5's run
 * defaults, written out because the engine takes every setting from its caller.
 */
export const fitSettings = {
  restarts: 5,
  seed: 0,
  tol: 1e-3,
  maxIterations: 200,
  regularization: 1e-6,
  init: 'mixed',
} as const satisfies Omit<FitOptions, 'components' | 'covarianceType'>;

/** A committed reference dataset from test/reference/data (sources in test/reference/README.md). */
export function referenceData(name: 'faithful' | 'iris' | 'thyroid' | 'wdbc' | 'banknote' | 'diabetes'): DataMatrix {
  const path = fileURLToPath(new URL(`../reference/data/${name}.csv`, import.meta.url));
  return parseNumericCsv(readFileSync(path, 'utf8'), `${name}.csv`).data;
}

/** A model built from plain numbers, through the same JSON reader the app uses. */
export function modelOf(covarianceType: CovarianceType, weights: number[], means: number[][], covariances: number[][][]): MixtureModel {
  return modelFromJSON({
    format: 'spendmix-mixture',
    version: 1,
    covarianceType,
    components: weights.length,
    dimensions: means[0].length,
    regularization: 0,
    weights,
    means,
    covariances,
  });
}

export function matrix(rows: number[][]): DataMatrix {
  return { values: Float64Array.from(rows.flat()), rows: rows.length, cols: rows[0].length };
}

export function sameBits(a: Float64Array, b: Float64Array): boolean {
  return a.length === b.length && Buffer.from(a.buffer, a.byteOffset, a.byteLength).equals(Buffer.from(b.buffer, b.byteOffset, b.byteLength));
}

/** The InputError a call throws (fails the test when it throws nothing or something else). */
export function inputErrorOf(run: () => unknown): InputError {
  try {
    run();
  } catch (error) {
    expect(error).toBeInstanceOf(InputError);
    return error as InputError;
  }
  throw new Error('expected an InputError');
}
