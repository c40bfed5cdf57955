/**
 * The fitting step of a run: one fit for a fixed k and structure, or the engine's sweep over the
 * k range and structures choosing by BIC or ICL (both lower-is-better), on worker threads. Checks
 * first that the data allow the largest k asked for.
 */
import { InputError } from '../errors.js';
import { fitMixtureParallel, sweepMixtures, sweepRowOf, covarianceTypes, type CovarianceType, type DataMatrix, type FitProgress, type InitMethod, type MixtureModel, type SweepRow } from '../model/index.js';
import type { ResolvedRunSettings } from './types.js';

export interface RunFit {
  model: MixtureModel;
  sweep: SweepRow[];
  warnings: string[];
}

/**
 * Runs start their restarts from the engine's mix (hierarchical agglomeration, then k-means and
 * random partitions in turn, DESIGN.md §5); the run settings do not offer another start yet.
 */
const RUN_INIT: InitMethod = 'mixed';

export async function fitForRun(
  data: DataMatrix,
  settings: ResolvedRunSettings,
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
    init: RUN_INIT,
    missing: anyMissing ? ('em' as const) : ('reject' as const),
    signal: options.signal,
    onProgress: options.onProgress,
  };
  if (kMin === kMax && structures.length === 1) {
    const result = await fitMixtureParallel(data, { ...common, components: kMin, covarianceType: structures[0] });
    const warnings = result.refused ? [...result.warnings, `This fit would be refused in a choice of k: ${result.refused}.`] : result.warnings;
    return { model: result.model, sweep: [sweepRowOf(result)], warnings };
  }
  const sweep = await sweepMixtures(data, { ...common, componentRange: [kMin, kMax], covarianceTypes: structures, criterion: settings.criterion });
  return { model: sweep.best.model, sweep: sweep.table, warnings: sweep.best.warnings };
}
