/** The Certainty screen's borderline table: customers under the thresholds, by spend at stake, with the why. */
import type { Database } from 'better-sqlite3';
import type { BorderlinePage, BorderlineQuery } from '../../api/contract.js';
import { borderlineCount, runCertaintySummary } from './certainty.js';
import { borderlineWhy, membershipRecords } from './membership-rows.js';
import { runSegments } from './run-segments.js';
import { storedRun } from './stored-run.js';

/**
 * One page of the customers the flag rule calls borderline under the given thresholds (the
 * sliders; absent = the run's own). The total comes from the run's certainty summary, the same
 * source as the screen's counts, so the table and the counts above it always agree.
 */
export function borderlinePage(db: Database, query: BorderlineQuery): BorderlinePage {
  const { runId, offset, limit } = query;
  const { settings } = storedRun(db, runId);
  const thresholds = {
    borderlineConfidence: query.borderlineConfidence ?? settings.borderlineConfidence,
    borderlineMargin: query.borderlineMargin ?? settings.borderlineMargin,
  };
  const total = borderlineCount(runCertaintySummary(db, runId), thresholds);
  const segments = runSegments(db, runId);
  const records = membershipRecords(db, segments, {
    where: 'm.segment_index IS NOT NULL AND (m.confidence < @confidence OR m.margin < @margin)',
    params: { confidence: thresholds.borderlineConfidence, margin: thresholds.borderlineMargin },
    orderBy: 'm.revenue_cents DESC',
    limit,
    offset,
  });
  return { runId, total, offset, rows: records.map((record) => ({ ...record.membership, why: borderlineWhy(db, segments, record)! })) };
}
