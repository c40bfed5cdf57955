/**
 * The fitting step of a run: one fit for a fixed k and structure, or the engine's sweep over the
 * k range and structures choosing by BIC or ICL (both lower-is-better), on worker threads. Checks
 * first that the data allow the largest k asked for. Every engine option is passed explicitly from
 * the run's settings (their defaults are the contract's, src/api/contract/settings.ts).
 */
import type { ExplicitRunSettings } from '../api/contract.js';
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
} from '../model/index.js';

/** A row of the model-selection table as stored with the run (`chosen` is decided when read). */
export type StoredSweepRow = SweepRow;

export interface RunFit {
  model: MixtureModel;
  sweep: StoredSweepRow[];
  warnings: string[];
}

export async function fitForRun(
  data: DataMatrix,
  settings: ExplicitRunSettings,
  options: { signal?: AbortSignal; onProgress?: (progress: FitProgress) => void },
): Promise<RunFit> {
  const [kMin, kMax] = settings.k === 'auto' ? [settings.kMin, settings.kMax] : [settings.k, settings.k];
  const structures: readonly CovarianceType[] = settings.covariance === 'auto' ? covarianceTypes : [settings.covariance];
  if (kMax >= data.rows) {
    throw new InputError(
      `k = ${kMax} is too large for ${data.rows} customers with enough history; the data allow at most k = ${Math.max(1, data.rows - 1)}. ` +
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
    return { model: result.model, sweep: [sweepRowOf(result)], warnings: result.warnings };
  }
  const sweep = await sweepMixtures(data, { ...common, componentRange: [kMin, kMax], covarianceTypes: structures, criterion: settings.criterion });
  return { model: sweep.best.model, sweep: sweep.table, warnings: sweep.best.warnings };
}
