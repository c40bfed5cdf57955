/** Every customer of a run as the export streams it (src/export/run-source.ts). */
import type { Database } from 'better-sqlite3';
import type { ExportCustomerRow } from '../types.js';
import { iterateMembershipRecords } from './membership-rows.js';
import { runSegments } from './run-segments.js';
import { storedRun } from './stored-run.js';

/**
 * Every customer of the run in id order, with consent from the customers table, streamed from
 * one prepared statement. While the iterator is open the connection is busy: do not run other
 * statements on the same `db` until it finishes (use a second connection if needed).
 */
export function* iterateRunCustomers(db: Database, runId: number): IterableIterator<ExportCustomerRow> {
  const { storedFeatures } = storedRun(db, runId);
  const segments = runSegments(db, runId);
  for (const record of iterateMembershipRecords(db, segments, { withConsent: true })) {
    const { membership } = record;
    const features: Record<string, number | null> = {};
    storedFeatures.forEach((name, j) => (features[name] = Number.isNaN(record.features[j]) ? null : record.features[j]));
    yield {
      customerId: membership.customerId,
      finalSegmentName: membership.finalSegmentName,
      modelSegmentName: membership.segmentName,
      confidence: membership.confidence,
      secondSegmentName: membership.secondSegmentName,
      secondProbability: membership.secondProbability,
      borderline: membership.borderline,
      atypical: membership.atypical,
      tooNew: membership.tooNew,
      excluded: membership.excluded,
      decision: membership.decision?.action ?? null,
      marketingConsent: record.marketingConsent,
      revenue: membership.revenue,
      features,
    };
  }
}
