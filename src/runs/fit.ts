/**
 * The fitting step of a run: one fit for a fixed k and structure, or a sweep over the k range and
 * structures choosing by BIC or ICL (both lower-is-better). Checks first that the data allow the
 * largest k asked for.
 */
import { InputError } from '../errors.js';
import { fitMixture } from '../model/index.js';
import { covarianceTypes, type CovarianceType, type DataMatrix, type FitProgress, type MixtureModel, type SweepRow } from '../model/types.js';
import type { ResolvedRunSettings } from './types.js';

export interface RunFit {
  model: MixtureModel;
  sweep: SweepRow[];
  warnings: string[];
}

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
  const common = {
    restarts: settings.restarts,
    seed: settings.seed,
    tol: settings.tol,
    maxIterations: settings.maxIterations,
    regularization: settings.regularization,
    missing: hasMissing(data) ? ('em' as const) : ('reject' as const),
    signal: options.signal,
    onProgress: options.onProgress,
  };
  const sweep: SweepRow[] = [];
  let best: { score: number; model: MixtureModel; warnings: string[] } | null = null;
  for (const covarianceType of structures) {
    for (let k = kMin; k <= kMax; k++) {
      const result = fitMixture(data, { ...common, components: k, covarianceType });
      sweep.push({
        k,
        covarianceType,
        logLikelihood: result.logLikelihood,
        bic: result.bic,
        aic: result.aic,
        icl: result.icl,
        converged: result.converged,
        iterations: result.iterations,
        parameterCount: result.parameterCount,
        warnings: result.warnings,
      });
      const score = settings.criterion === 'icl' ? result.icl : result.bic;
      if (!best || score < best.score) best = { score, model: result.model, warnings: result.warnings };
      await new Promise((resolve) => setImmediate(resolve));
    }
  }
  return { model: best!.model, sweep, warnings: best!.warnings };
}

function hasMissing(data: DataMatrix): boolean {
  for (let i = 0; i < data.values.length; i++) if (Number.isNaN(data.values[i])) return true;
  return false;
}
