/**
 * The fitting step of a run: one fit for a fixed k and structure, or the engine's sweep over the
 * k range and structures choosing by BIC or ICL (both lower-is-better), on worker threads. With a
 * fit sample, the fit (and the sweep) sees only a seeded uniform sample of the placed customers;
 * the run then scores everyone with the model. Checks first that the rows fitted allow the largest
 * k asked for. Every engine option is passed explicitly from the run's settings (their defaults
 * are the contract's, src/api/contract/settings.ts).
 */
import type { ExplicitRunSettings, RunSettings } from '../api/contract.js';
import { InputError } from '../errors.js';
import {
  covarianceTypes,
  everyFitRefused,
  fitMixtureParallel,
  sweepMixtures,
  sweepRowOf,
  type CovarianceType,
  type DataMatrix,
  type FitProgress,
  type MixtureModel,
  type SweepRow,
  restartStream,
  uniformSampleIndexes,
} from '../model/index.js';

/** A row of the model-selection table as stored with the run (`chosen` is decided when read). */
export type StoredSweepRow = SweepRow;

export interface RunFit {
  model: MixtureModel;
  sweep: StoredSweepRow[];
  warnings: string[];
}

/** Mixed into the run's seed so the fit sample does not replay the restarts' or the display sample's streams. */
const FIT_SAMPLE_SALT = 0x2b6f13d7;

/**
 * How many placed customers a refit fits on: the fit sample when it is smaller than the placed
 * customers, else all of them (a larger sample fits all, with a warning). What the run detail reports.
 */
export function fittedCustomerCount(fitSample: number | null, placed: number): number {
  return fitSample !== null && fitSample < placed ? fitSample : placed;
}

/** The progress line of the fitting phase. */
export function fittingMessage(fitSample: number | null, placed: number): string {
  const fitted = fittedCustomerCount(fitSample, placed);
  return fitted < placed
    ? `Fitting mixtures on a seeded sample of ${fitted.toLocaleString('en-GB')} of ${placed.toLocaleString('en-GB')} customers`
    : 'Fitting mixtures';
}

/**
 * Rows 0..placed-1 of the fit sample, in ascending order: a uniform sample without replacement
 * drawn from the run's seed, so the same settings draw the same customers.
 */
export function fitSampleRows(placed: number, fitSample: number, seed: number): Int32Array {
  return uniformSampleIndexes(placed, fitSample, restartStream((seed ^ FIT_SAMPLE_SALT) | 0, 0)).sort();
}

/** The rows of `data` the fit sees, with a warning when the fit sample asks for more than there are. */
function fittedRows(data: DataMatrix, settings: ExplicitRunSettings): { data: DataMatrix; warnings: string[] } {
  const { fitSample } = settings;
  if (fitSample === null || fitSample === data.rows) return { data, warnings: [] };
  if (fitSample > data.rows) {
    return {
      data,
      warnings: [
        `The fit sample (${fitSample.toLocaleString('en-GB')}) is larger than the ${data.rows.toLocaleString('en-GB')} placed customers, so the model was fitted on all of them.`,
      ],
    };
  }
  const rows = fitSampleRows(data.rows, fitSample, settings.seed);
  const d = data.cols;
  const values = new Float64Array(rows.length * d);
  rows.forEach((row, i) => values.set(data.values.subarray(row * d, (row + 1) * d), i * d));
  return { data: { ...data, values, rows: rows.length }, warnings: [] };
}

/**
 * The numbers of components a fit tries: k when fixed; with k auto kMin to kMax, but never fewer
 * components than a fixed segment count asks for (a segment is one or more components), so such a
 * run cannot choose a model too small for it.
 */
export function componentsSearched(settings: Pick<RunSettings, 'k' | 'kMin' | 'kMax' | 'segmentCount'>): { from: number; to: number } {
  if (settings.k !== 'auto') return { from: settings.k, to: settings.k };
  const fewest = settings.segmentCount === 'auto' ? settings.kMin : Math.max(settings.kMin, settings.segmentCount);
  return { from: Math.min(fewest, settings.kMax), to: settings.kMax };
}

export async function fitForRun(
  placedData: DataMatrix,
  settings: ExplicitRunSettings,
  options: { signal?: AbortSignal; onProgress?: (progress: FitProgress) => void },
): Promise<RunFit> {
  const { from: kMin, to: kMax } = componentsSearched(settings);
  const structures: readonly CovarianceType[] = settings.covariance === 'auto' ? covarianceTypes : [settings.covariance];
  const { data, warnings: sampleWarnings } = fittedRows(placedData, settings);
  if (kMax >= data.rows) {
    const allowed = `at most k = ${Math.max(1, data.rows - 1)}`;
    throw new InputError(
      data.rows < placedData.rows
        ? `k = ${kMax} is too large for a fit sample of ${data.rows} customers; the sample allows ${allowed}. ` +
            'Raise the fit sample (--fit-sample, or none to fit on all placed customers) or lower k (or --k-max).'
        : `k = ${kMax} is too large for ${data.rows} customers with enough history; the data allow ${allowed}. ` +
            'Lower k (or --k-max) or widen the window.',
    );
  }
  let anyMissing = false;
  for (let i = 0; i < data.values.length && !anyMissing; i++) anyMissing = Number.isNaN(data.values[i]);
  const common = {
    restarts: settings.restarts,
    seed: settings.seed,
    tol: settings.tol,
    maxIterations: settings.maxIterations,
    regularization: settings.regularization,
    init: settings.init,
    missing: anyMissing ? ('em' as const) : ('reject' as const),
    signal: options.signal,
    onProgress: options.onProgress,
  };
  if (kMin === kMax && structures.length === 1) {
    const result = await fitMixtureParallel(data, { ...common, components: kMin, covarianceType: structures[0] });
    // A collapsed component is no segment to act on: the one fit asked for is refused as a sweep's would be.
    if (result.refused) throw everyFitRefused([sweepRowOf(result)]);
    return { model: result.model, sweep: [sweepRowOf(result)], warnings: [...sampleWarnings, ...result.warnings] };
  }
  const sweep = await sweepMixtures(data, { ...common, componentRange: [kMin, kMax], covarianceTypes: structures, criterion: settings.criterion });
  return { model: sweep.best.model, sweep: sweep.table, warnings: [...sampleWarnings, ...sweep.best.warnings] };
}
