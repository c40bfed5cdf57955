/**
 * The Review screen's queue (`review list`): queued customers by spend at stake, each with the
 * reasons, the why, their features beside the top two segments' medians, and last month's
 * segment and decision.
 */
import type { Database } from 'better-sqlite3';
import type { ReviewDecision, ReviewItem, ReviewQueuePage, ReviewQueueQuery } from '../../api/contract.js';
import { featureLabel } from '../../features/definitions.js';
import { reviewReasons } from '../review-rules.js';
import { borderlineWhy, countMemberships, decisionsOfRun, membershipRecords, type MembershipRecord } from './membership-rows.js';
import { runSegments, type RunSegments } from './run-segments.js';
import { storedRun } from './stored-run.js';

const statusConditions = { all: '', open: 'd.action IS NULL', done: 'd.action IS NOT NULL' } as const;

/** The queue's order: spend at stake, highest first (ties by customer id). */
const QUEUE_ORDER = 'm.revenue_cents DESC';

/** What the items of one run need from its parent: segment names by key and the decisions made there. */
function parentContext(db: Database, parentRunId: number | null): { nameOfKey: ReadonlyMap<string, string>; decisionOf: (customerId: string) => ReviewDecision | null } {
  if (parentRunId === null) return { nameOfKey: new Map<string, string>(), decisionOf: () => null };
  const { nameOfKey } = runSegments(db, parentRunId);
  return { nameOfKey, decisionOf: decisionsOfRun(db, parentRunId, nameOfKey) };
}

function reviewItems(db: Database, segments: RunSegments, records: MembershipRecord[]): ReviewItem[] {
  const run = storedRun(db, segments.runId);
  const parent = parentContext(db, run.parentRunId);
  const median = (segment: number | null, feature: string) =>
    segment === null ? null : (segments.profileOf(segment).features[feature]?.median ?? null);
  return records.map((record): ReviewItem => {
    const { membership } = record;
    return {
      ...membership,
      reasons: reviewReasons(record.reviewMask),
      why: borderlineWhy(db, segments, record),
      featureComparison: run.features.map((feature, j) => ({
        feature,
        label: featureLabel(feature),
        value: Number.isNaN(record.features[j]) ? null : record.features[j],
        topMedian: median(membership.segment, feature),
        secondMedian: median(membership.secondSegment, feature),
      })),
      previousSegmentName: record.previousKey === null ? null : (parent.nameOfKey.get(record.previousKey) ?? null),
      previousDecision: parent.decisionOf(membership.customerId),
    };
  });
}

/** One page of the queue; `done` counts the decided items whatever the page's status filter. */
export function reviewQueuePage(db: Database, query: ReviewQueueQuery): ReviewQueuePage {
  const { runId, offset, limit, status } = query;
  storedRun(db, runId);
  const segments = runSegments(db, runId);
  const where = ['m.review > 0', statusConditions[status]].filter(Boolean).join(' AND ');
  const total = countMemberships(db, runId, { where });
  const done = status === 'done' ? total : countMemberships(db, runId, { where: `m.review > 0 AND ${statusConditions.done}` });
  const records = membershipRecords(db, segments, { where, orderBy: QUEUE_ORDER, limit, offset });
  return { runId, total, done, offset, rows: reviewItems(db, segments, records) };
}

/** One queued customer's item; null when the customer is not in the run's queue. */
export function reviewItem(db: Database, runId: number, customerId: string): ReviewItem | null {
  const segments = runSegments(db, runId);
  const records = membershipRecords(db, segments, { where: 'm.review > 0 AND m.customer_id = @customerId', params: { customerId } });
  return records.length === 0 ? null : reviewItems(db, segments, records)[0];
}

/** Every queued customer in the queue's order, a page at a time (the export's review sheet). */
export function* everyReviewItem(db: Database, runId: number, pageSize = 10_000): Generator<ReviewItem> {
  const segments = runSegments(db, runId);
  for (let offset = 0; ; offset += pageSize) {
    const records = membershipRecords(db, segments, { where: 'm.review > 0', orderBy: QUEUE_ORDER, limit: pageSize, offset });
    yield* reviewItems(db, segments, records);
    if (records.length < pageSize) return;
  }
}
