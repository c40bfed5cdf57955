/** The stored runs, newest first (the Model screen's run picker, `runs`). */
import type { Database } from 'better-sqlite3';
import type { CovarianceType, RefreshMode, RunListItem, SegmentationMethod } from '../../api/contract.js';

interface RunListRow {
  run_id: number;
  parent_run_id: number | null;
  k: number;
  covariance: CovarianceType;
  bic: number;
  customers: number;
  too_new: number;
  borderline: number;
  atypical: number;
  stability: number | null;
  created_at: string;
  as_of: string;
  window_months: number;
  mode: RefreshMode;
  /** Null for runs stored before segments were made of components (one segment per component). */
  method: SegmentationMethod | null;
  segment_count: number;
}

export function listRuns(db: Database): RunListItem[] {
  const rows = db
    .prepare(
      `SELECT run_id, parent_run_id, k, covariance, bic, customers, too_new, borderline, atypical, stability, created_at, as_of, window_months, mode,
              json_extract(segmentation, '$.method') AS method, ifnull(json_array_length(segmentation, '$.segments'), k) AS segment_count
         FROM runs ORDER BY run_id DESC`,
    )
    .all() as RunListRow[];
  return rows.map((row) => ({
    runId: row.run_id,
    parentRunId: row.parent_run_id,
    k: row.k,
    covariance: row.covariance,
    bic: row.bic,
    segmentCount: row.segment_count,
    segmentation: row.method ?? 'level',
    customers: row.customers,
    tooNew: row.too_new,
    borderline: row.borderline,
    atypical: row.atypical,
    stability: row.stability,
    createdAt: row.created_at,
    asOf: row.as_of,
    windowMonths: row.window_months,
    mode: row.mode,
  }));
}

/** How many runs the database holds (the top bar). */
export function countRuns(db: Database): number {
  return db.prepare('SELECT count(*) FROM runs').pluck().get() as number;
}
