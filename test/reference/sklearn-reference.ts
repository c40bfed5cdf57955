/**
 * Reads the outside-reference fixtures (R's datasets exported by export-datasets.R, scikit-learn
 * results recorded by record-sklearn.py) and compares engine fits with them. Shared by the
 * engine-vs-sklearn test and the compare-engine script that prints the comparison table.
 */
import { createHash } from 'node:crypto';
import { readFileSync } from 'node:fs';
import {
  componentsOf,
  covarianceTypes,
  fitMixture,
  matchComponents,
  sweepMixtures,
  type CovarianceType,
  type DataMatrix,
  type FitResult,
  type SweepResult,
} from '../../src/model/index.js';

export interface RecordedFit {
  k: number;
  covariance: CovarianceType;
  logLikelihood: number;
  meanLogLikelihood: number;
  bic: number;
  aic: number;
  parameters: number;
  converged: boolean;
  iterations: number;
  smallestVarianceRatio: number;
  weights: number[];
  means: number[][];
  covariances: number[][][];
}

export interface RecordedSweepRow {
  k: number;
  bic: number;
  logLikelihood: number;
  smallestVarianceRatio: number;
}

export interface RecordedDataset {
  file: string;
  sha256: string;
  source: string;
  columns: string[];
  n: number;
  d: number;
  fits: RecordedFit[];
  bicSweep: { ks: number[]; structures: { covariance: CovarianceType; table: RecordedSweepRow[]; winnerK: number }[] };
}

export interface RecordedResults {
  versions: Record<string, string>;
  settings: { n_init: number; tol: number; max_iter: number; reg_covar: number; random_state: number };
  datasets: Record<string, RecordedDataset>;
}

const referenceFolder = new URL('./', import.meta.url);

export function loadRecordedResults(): RecordedResults {
  return JSON.parse(readFileSync(new URL('sklearn-results.json', referenceFolder), 'utf8')) as RecordedResults;
}

/** The numeric fixture CSV as a DataMatrix, with the SHA-256 of the bytes that were read. */
export function readReferenceMatrix(relativePath: string): { data: DataMatrix; sha256: string } {
  const bytes = readFileSync(new URL(relativePath, referenceFolder));
  const lines = bytes.toString('utf8').trim().split(/\r?\n/);
  const columnNames = lines[0].split(',');
  const cols = columnNames.length;
  const values = new Float64Array((lines.length - 1) * cols);
  lines.slice(1).forEach((line, row) => {
    const cells = line.split(',');
    if (cells.length !== cols) throw new Error(`${relativePath} line ${row + 2}: ${cells.length} cells, expected ${cols}`);
    cells.forEach((cell, column) => {
      const value = Number(cell);
      if (cell.trim() === '' || !Number.isFinite(value)) throw new Error(`${relativePath} line ${row + 2}: "${cell}" is not a number`);
      values[row * cols + column] = value;
    });
  });
  return {
    data: { values, rows: lines.length - 1, cols, columnNames },
    sha256: createHash('sha256').update(bytes).digest('hex'),
  };
}

/**
 * Our fit with the settings the reference script gave scikit-learn (10 starts, tol 1e-6, …) and
 * its kind of start (GaussianMixture's init_params = 'kmeans'), so both engines climb from the
 * same kind of start; the app's mixed starts are checked against mclust (mclust-optima.test.ts).
 */
export function fitLikeRecorded(data: DataMatrix, k: number, covarianceType: CovarianceType, settings: RecordedResults['settings']): FitResult {
  return fitMixture(data, {
    components: k,
    covarianceType,
    restarts: settings.n_init,
    tol: settings.tol,
    maxIterations: settings.max_iter,
    regularization: settings.reg_covar,
    seed: settings.random_state,
    init: 'kmeans',
  });
}

/** How far our fitted parameters are from scikit-learn's once components are paired up. */
export interface ParameterGap {
  /** our component paired with each recorded one, by minimum total Bhattacharyya distance */
  ourComponentOf: number[];
  /** largest weight difference */
  weight: number;
  /** largest mean difference in units of the recorded component's standard deviation */
  mean: number;
  /** largest covariance-entry difference over √(Σᵢᵢ Σⱼⱼ) of the recorded component */
  covariance: number;
}

/** Pairs our components with the recorded ones (Hungarian on Bhattacharyya) and measures the gaps. */
export function parameterGap(ours: FitResult, recorded: RecordedFit): ParameterGap {
  const { components: k, dimensions: d } = ours.model;
  const reference = {
    components: recorded.k,
    dimensions: d,
    means: Float64Array.from(recorded.means.flat()),
    covariances: Float64Array.from(recorded.covariances.flat(2)),
  };
  const matching = matchComponents(componentsOf(reference), componentsOf(ours.model));
  if (matching.pairs.length !== k || recorded.k !== k) throw new Error(`matched ${matching.pairs.length} of ${k} components`);
  const ourComponentOf = new Array<number>(k).fill(-1);
  let weight = 0;
  let mean = 0;
  let covariance = 0;
  for (const { parent, child } of matching.pairs) {
    ourComponentOf[parent] = child;
    const variances = recorded.covariances[parent].map((row, i) => row[i]);
    weight = Math.max(weight, Math.abs(ours.model.weights[child] - recorded.weights[parent]));
    for (let i = 0; i < d; i++) {
      mean = Math.max(mean, Math.abs(ours.model.means[child * d + i] - recorded.means[parent][i]) / Math.sqrt(variances[i]));
      for (let j = 0; j < d; j++) {
        const gap = Math.abs(ours.model.covariances[(child * d + i) * d + j] - recorded.covariances[parent][i][j]);
        covariance = Math.max(covariance, gap / Math.sqrt(variances[i] * variances[j]));
      }
    }
  }
  return { ourComponentOf, weight, mean, covariance };
}

/** Our fits for the recorded k (2 and 3) of one structure, keyed by k. */
export function fitsLikeRecorded(data: DataMatrix, covarianceType: CovarianceType, recorded: RecordedResults, dataset: RecordedDataset): Map<number, FitResult> {
  const fits = new Map<number, FitResult>();
  for (const fit of dataset.fits) {
    if (fit.covariance === covarianceType) fits.set(fit.k, fitLikeRecorded(data, fit.k, covarianceType, recorded.settings));
  }
  return fits;
}

/** Our sweep (worker threads) over the recorded range of k and all four structures, same settings. */
export function sweepLikeRecorded(data: DataMatrix, recorded: RecordedResults, dataset: RecordedDataset): Promise<SweepResult> {
  const ks = dataset.bicSweep.ks;
  return sweepMixtures(data, {
    componentRange: [Math.min(...ks), Math.max(...ks)],
    covarianceTypes,
    restarts: recorded.settings.n_init,
    tol: recorded.settings.tol,
    maxIterations: recorded.settings.max_iter,
    regularization: recorded.settings.reg_covar,
    seed: recorded.settings.random_state,
    init: 'kmeans',
    criterion: 'bic',
    threads: 2,
  });
}

/** The k with the lowest BIC (the first on ties, as Python's min does). */
export function bicWinner(rows: { k: number; bic: number }[]): number {
  return rows.reduce((best, row) => (row.bic < best.bic ? row : best)).k;
}
