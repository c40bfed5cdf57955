/**
 * The Review screen's queue (`review list`): flagged customers by what a decision is worth (spend
 * at stake × uncertainty, src/runs/review-rules.ts), the queue being the first `reviewCapacity` of
 * them and the rest counted beyond it; each item with its reasons, the why (borderline) or the
 * extreme features (atypical), its features beside the top two segments' medians, and last
 * month's segment and decision.
 */
import type { Database } from 'better-sqlite3';
import type { ReviewDecision, ReviewItem, ReviewQueuePage, ReviewQueueQuery, ReviewScope } from '../../api/contract.js';
import { featureLabel } from '../../features/definitions.js';
import { atypicalWhy } from '../atypical.js';
import { REVIEW_ATYPICAL, REVIEW_BORDERLINE, REVIEW_MOVER, reviewReasons, reviewUncertainty } from '../review-rules.js';
import { borderlineWhy, countMemberships, decisionsOfRun, membershipRecords, type MembershipRecord } from './membership-rows.js';
import { queueCounts } from './review-counts.js';
import { runSegments, type RunSegments } from './run-segments.js';
import { storedRun } from './stored-run.js';

const statusConditions = { all: '', open: 'd.action IS NULL', done: 'd.action IS NOT NULL' } as const;
const scopeConditions: Record<ReviewScope, string> = { queued: 'm.review > 0 AND m.queued = 1', unqueued: 'm.review > 0 AND m.queued = 0', flagged: 'm.review > 0' };

/** The queue's order: what a decision is worth, highest first (ties by customer id). */
const QUEUE_ORDER = 'm.review_value DESC';

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
    const { membership, reviewMask } = record;
    const uncertainty = reviewUncertainty(reviewMask, membership.confidence ?? 1, membership.logDensity ?? 0, run.atypicalCut);
    return {
      ...membership,
      reasons: reviewReasons(reviewMask),
      value: record.reviewValue ?? 0,
      uncertainty,
      why: reviewMask & (REVIEW_BORDERLINE | REVIEW_MOVER) ? borderlineWhy(db, segments, record) : null,
      atypicalWhy: reviewMask & REVIEW_ATYPICAL || membership.atypical ? atypicalWhy(record.atypicalTerms ?? []) : null,
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

/** One page of the queue (or of the flagged beyond it); `done` counts the decided customers of the scope whatever the status filter. */
export function reviewQueuePage(db: Database, query: ReviewQueueQuery): ReviewQueuePage {
  const { runId, offset, limit, status, scope } = query;
  storedRun(db, runId);
  const segments = runSegments(db, runId);
  const where = [scopeConditions[scope], statusConditions[status]].filter(Boolean).join(' AND ');
  const total = countMemberships(db, runId, { where });
  const done = status === 'done' ? total : countMemberships(db, runId, { where: `${scopeConditions[scope]} AND ${statusConditions.done}` });
  const records = membershipRecords(db, segments, { where, orderBy: QUEUE_ORDER, limit, offset });
  return { runId, total, done, offset, rows: reviewItems(db, segments, records), queue: queueCounts(db, runId) };
}

/** One flagged customer's item (queued or not); null when the customer is not flagged in the run. */
export function reviewItem(db: Database, runId: number, customerId: string): ReviewItem | null {
  const segments = runSegments(db, runId);
  const records = membershipRecords(db, segments, { where: 'm.review > 0 AND m.customer_id = @customerId', params: { customerId } });
  return records.length === 0 ? null : reviewItems(db, segments, records)[0];
}

/** Every queued customer in the queue's order, a page at a time (the export's review sheet). */
export function* everyReviewItem(db: Database, runId: number, pageSize = 10_000): Generator<ReviewItem> {
  const segments = runSegments(db, runId);
  for (let offset = 0; ; offset += pageSize) {
    const records = membershipRecords(db, segments, { where: scopeConditions.queued, orderBy: QUEUE_ORDER, limit: pageSize, offset });
    yield* reviewItems(db, segments, records);
    if (records.length < pageSize) return;
  }
}
