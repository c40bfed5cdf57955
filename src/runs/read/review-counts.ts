/** The review queue of a run at its capacity, counted: flagged, queued, and who was left out and why. */
import type { Database } from 'better-sqlite3';
import type { QueueCounts } from '../../api/contract.js';
import { REVIEW_ATYPICAL, REVIEW_BORDERLINE, REVIEW_MOVER } from '../review-rules.js';
import { storedRun } from './stored-run.js';

export function queueCounts(db: Database, runId: number): QueueCounts {
  const capacity = storedRun(db, runId).settings.reviewCapacity;
  const row = db
    .prepare(
      `SELECT count(*) AS flagged,
              ifnull(sum(m.queued), 0) AS queued,
              ifnull(sum(m.queued = 0 AND (m.review & ${REVIEW_BORDERLINE}) > 0), 0) AS borderline,
              ifnull(sum(m.queued = 0 AND (m.review & ${REVIEW_ATYPICAL}) > 0), 0) AS atypical,
              ifnull(sum(m.queued = 0 AND (m.review & ${REVIEW_MOVER}) > 0), 0) AS mover,
              ifnull(sum(m.queued = 0 AND d.action IS NOT NULL), 0) AS leftOutDecided,
              min(CASE WHEN m.queued = 1 THEN m.review_value END) AS lowestQueuedValue
         FROM run_memberships m
         LEFT JOIN review_decisions d ON d.run_id = m.run_id AND d.customer_id = m.customer_id
        WHERE m.run_id = ? AND m.review > 0`,
    )
    .get(runId) as {
    flagged: number;
    queued: number;
    borderline: number;
    atypical: number;
    mover: number;
    leftOutDecided: number;
    lowestQueuedValue: number | null;
  };
  const leftOut = row.flagged - row.queued;
  return {
    capacity,
    flagged: row.flagged,
    queued: row.queued,
    leftOut: { customers: leftOut, borderline: row.borderline, atypical: row.atypical, mover: row.mover },
    leftOutDecided: row.leftOutDecided,
    valueCut: leftOut > 0 ? (row.lowestQueuedValue ?? 0) : null,
  };
}
