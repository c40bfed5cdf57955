/**
 * Customers of a run as the screens and the export see them: one run_memberships row joined to
 * its review decision, turned into the contract's MembershipRow (final segment after the
 * decision, names read fresh by key). Every list of customers (memberships, borderline, review
 * queue, export) reads through here; the SQL row type stays in this module.
 */
import type { Database } from 'better-sqlite3';
import type { BorderlineWhy, MembershipRow, ReviewAction, ReviewDecision } from '../../api/contract.js';
import { transformValue } from '../../features/transforms.js';
import { decodeFloat64 } from '../blobs.js';
import { finalSegmentKey } from '../review-rules.js';
import type { StoredAtypicalTerm } from '../atypical.js';
import { explainBorderline } from '../why.js';
import type { RunSegments } from './run-segments.js';
import { runModel, storedRun } from './stored-run.js';

/** The decision columns of a review_decisions row. */
interface DecisionColumns {
  action: ReviewAction | null;
  segment_key: string | null;
  note: string | null;
  reviewer: string | null;
  decided_at: string | null;
  carried_from_run_id: number | null;
}

interface MembershipSqlRow extends DecisionColumns {
  customer_id: string;
  segment_index: number | null;
  confidence: number | null;
  margin: number | null;
  second_index: number | null;
  second_probability: number | null;
  log_density: number | null;
  borderline: number;
  atypical: number;
  partial: number;
  too_new: number;
  review: number;
  previous_key: string | null;
  revenue_cents: number;
  spend_per_month: number | null;
  features: Buffer;
  queued: number;
  review_value: number | null;
  atypical_reason: string | null;
  marketing_consent?: 0 | 1 | null;
}

const columns = `
  m.customer_id, m.segment_index, m.confidence, m.margin, m.second_index, m.second_probability, m.log_density,
  m.borderline, m.atypical, m.partial, m.too_new, m.review, m.previous_key, m.revenue_cents, m.spend_per_month, m.features,
  m.queued, m.review_value, m.atypical_reason,
  d.action, d.segment_key, d.note, d.reviewer, d.decided_at, d.carried_from_run_id`;
const from = `
  FROM run_memberships m
  LEFT JOIN review_decisions d ON d.run_id = m.run_id AND d.customer_id = m.customer_id`;

/** One customer of a run: the contract's row plus what only the core reads. */
export interface MembershipRecord {
  membership: MembershipRow;
  /** Why the customer is flagged for review, as the review column's bits (0 = not flagged). */
  reviewMask: number;
  /** What a decision is worth (the queue's order); null when not flagged. */
  reviewValue: number | null;
  /** Why an atypical customer fits no segment (stored terms); null otherwise. */
  atypicalTerms: StoredAtypicalTerm[] | null;
  /** The customer's segment key in the parent run, if placed there. */
  previousKey: string | null;
  /** Stored features in original units, in the run's stored order. */
  features: Float64Array;
  /** Marketing consent (only when asked for with `withConsent`). */
  marketingConsent: 0 | 1 | null;
}

function decisionOf(row: DecisionColumns, nameOfKey: ReadonlyMap<string, string>): ReviewDecision | null {
  if (row.action === null || row.decided_at === null) return null;
  return {
    action: row.action,
    segmentKey: row.segment_key,
    segmentName: row.segment_key === null ? null : (nameOfKey.get(row.segment_key) ?? null),
    note: row.note,
    reviewer: row.reviewer,
    decidedAt: row.decided_at,
    carriedFromRunId: row.carried_from_run_id,
  };
}

/** The decision made on a customer in another run (last month's, for the review queue), named with that run's segment names. */
export function decisionsOfRun(db: Database, runId: number, nameOfKey: ReadonlyMap<string, string>): (customerId: string) => ReviewDecision | null {
  const statement = db.prepare(
    'SELECT action, segment_key, note, reviewer, decided_at, carried_from_run_id FROM review_decisions WHERE run_id = ? AND customer_id = ?',
  );
  return (customerId) => {
    const found = statement.get(runId, customerId) as DecisionColumns | undefined;
    return found ? decisionOf(found, nameOfKey) : null;
  };
}

function toRecord(row: MembershipSqlRow, segments: RunSegments): MembershipRecord {
  const decision = decisionOf(row, segments.nameOfKey);
  const final =
    row.segment_index === null ? { key: null, excluded: decision?.action === 'exclude' } : finalSegmentKey(segments.keyOf(row.segment_index), decision, segments.keys);
  return {
    membership: {
      customerId: row.customer_id,
      segment: row.segment_index,
      segmentName: segments.nameOf(row.segment_index),
      finalSegment: final.key === null ? null : (segments.indexOfKey.get(final.key) ?? null),
      finalSegmentName: final.key === null ? null : (segments.nameOfKey.get(final.key) ?? null),
      confidence: row.confidence,
      margin: row.margin,
      secondSegment: row.second_index,
      secondSegmentName: segments.nameOf(row.second_index),
      secondProbability: row.second_probability,
      logDensity: row.log_density,
      borderline: row.borderline === 1,
      atypical: row.atypical === 1,
      partial: row.partial === 1,
      tooNew: row.too_new === 1,
      excluded: final.excluded,
      flagged: row.review > 0,
      queued: row.queued === 1,
      revenue: row.revenue_cents / 100,
      spendPerMonth: row.spend_per_month,
      decision,
    },
    reviewMask: row.review,
    reviewValue: row.review_value,
    atypicalTerms: row.atypical_reason === null ? null : (JSON.parse(row.atypical_reason) as StoredAtypicalTerm[]),
    previousKey: row.previous_key,
    features: decodeFloat64(row.features),
    marketingConsent: row.marketing_consent ?? null,
  };
}

export interface MembershipSelection {
  /** Conditions on `m` (run_memberships) and `d` (review_decisions); `m.run_id = @runId` is added. */
  where?: string;
  /** Default: customer id. Ties are always broken by customer id. */
  orderBy?: string;
  params?: Record<string, unknown>;
  limit?: number;
  offset?: number;
  /** Join the customers table for marketing consent (the export). */
  withConsent?: boolean;
}

function selectionSql(runId: number, selection: MembershipSelection): { sql: string; params: Record<string, unknown> } {
  const where = ['m.run_id = @runId', ...(selection.where ? [`(${selection.where})`] : [])].join(' AND ');
  const order = selection.orderBy ? `${selection.orderBy}, m.customer_id` : 'm.customer_id';
  const page = selection.limit !== undefined ? ' LIMIT @limit OFFSET @offset' : '';
  const consent = selection.withConsent ? ', c.marketing_consent' : '';
  const customers = selection.withConsent ? ' LEFT JOIN customers c ON c.customer_id = m.customer_id' : '';
  return {
    sql: `SELECT ${columns}${consent} ${from}${customers} WHERE ${where} ORDER BY ${order}${page}`,
    params: { ...selection.params, runId, ...(page ? { limit: selection.limit, offset: selection.offset ?? 0 } : {}) },
  };
}

/** The customers a selection picks, as records. */
export function membershipRecords(db: Database, segments: RunSegments, selection: MembershipSelection): MembershipRecord[] {
  const { sql, params } = selectionSql(segments.runId, selection);
  return (db.prepare(sql).all(params) as MembershipSqlRow[]).map((row) => toRecord(row, segments));
}

/**
 * The customers a selection picks, streamed from one prepared statement. While the iterator is
 * open the connection is busy: run nothing else on `db` until it finishes.
 */
export function* iterateMembershipRecords(db: Database, segments: RunSegments, selection: MembershipSelection): IterableIterator<MembershipRecord> {
  const { sql, params } = selectionSql(segments.runId, selection);
  for (const row of db.prepare(sql).iterate(params) as Iterable<MembershipSqlRow>) yield toRecord(row, segments);
}

/** How many customers a selection picks. */
export function countMemberships(db: Database, runId: number, selection: Pick<MembershipSelection, 'where' | 'params'>): number {
  const where = ['m.run_id = @runId', ...(selection.where ? [`(${selection.where})`] : [])].join(' AND ');
  return db.prepare(`SELECT count(*) ${from} WHERE ${where}`).pluck().get({ ...selection.params, runId }) as number;
}

/**
 * Why a placed customer sits between their top two segments (each the mixture of its components),
 * from the run's model (parsed once per connection) and the customer's stored features; null for
 * too-new customers and when the run has one segment.
 */
export function borderlineWhy(db: Database, segments: RunSegments, record: MembershipRecord): BorderlineWhy | null {
  const { segment, secondSegment } = record.membership;
  if (segment === null || secondSegment === null) return null;
  const run = storedRun(db, segments.runId);
  const model = runModel(db, segments.runId);
  // Model features are stored first, in model order.
  const x = run.features.map((name, j) => transformValue(name, run.transforms[name], record.features[j]));
  const whySegment = (index: number) => {
    const stored = segments.list.find((candidate) => candidate.index === index);
    return { components: stored?.components ?? [], name: stored?.name ?? `segment ${index}` };
  };
  return explainBorderline(model, x, whySegment(segment), whySegment(secondSegment), run.features);
}
