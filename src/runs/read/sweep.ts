/** The model-selection table of a run (the Model screen's information-criterion chart). */
import type { Database } from 'better-sqlite3';
import type { SweepRow } from '../../api/contract.js';
import type { StoredSweepRow } from '../fit.js';
import { storedRun } from './stored-run.js';

/**
 * Rows stored before the table named the structure `covariance` called it `covarianceType`, and
 * rows stored before fits could be refused have no `refused`.
 */
type StoredRow = (StoredSweepRow | (Omit<StoredSweepRow, 'covariance'> & { covarianceType: StoredSweepRow['covariance'] })) & { refused?: string | null };

/** One row per fit tried (one for a fixed k and structure, none for a rescore), the kept one marked. */
export function sweepTable(db: Database, runId: number): SweepRow[] {
  const run = storedRun(db, runId);
  const rows = JSON.parse(db.prepare('SELECT sweep FROM runs WHERE run_id = ?').pluck().get(runId) as string) as StoredRow[];
  return rows.map((stored) => {
    const { k, logLikelihood, bic, aic, icl, parameterCount, converged, iterations, warnings } = stored;
    const covariance = 'covariance' in stored ? stored.covariance : stored.covarianceType;
    const refused = stored.refused ?? null;
    return { k, covariance, logLikelihood, bic, aic, icl, parameterCount, converged, iterations, warnings, refused, chosen: k === run.k && covariance === run.covariance };
  });
}
