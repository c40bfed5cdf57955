/** Pages of a run's customers, sortable and filterable (the Segments screen's customer table). */
import type { Database } from 'better-sqlite3';
import type { MembershipFlag, MembershipSortKey, MembershipsPage, MembershipsQuery } from '../../api/contract.js';
import { InputError } from '../../errors.js';
import { countMemberships, membershipRecords } from './membership-rows.js';
import { runSegments } from './run-segments.js';
import { storedRun } from './stored-run.js';

const sortColumns: Record<MembershipSortKey, string> = {
  customerId: 'm.customer_id',
  confidence: 'm.confidence',
  margin: 'm.margin',
  logDensity: 'm.log_density',
  revenue: 'm.revenue_cents',
  spend: 'm.spend_per_month',
};

const flagConditions: Record<MembershipFlag, string> = {
  borderline: 'm.borderline = 1',
  atypical: 'm.atypical = 1',
  partial: 'm.partial = 1',
  tooNew: 'm.too_new = 1',
  review: 'm.review > 0',
  queued: 'm.queued = 1',
  decided: 'd.action IS NOT NULL',
};

export function membershipsPage(db: Database, query: MembershipsQuery): MembershipsPage {
  const { runId, offset, limit } = query;
  storedRun(db, runId);
  const segments = runSegments(db, runId);
  const conditions: string[] = [];
  const params: Record<string, unknown> = {};
  if (query.segment === null) conditions.push('m.segment_index IS NULL');
  else if (query.segment !== undefined) {
    if (!segments.list.some((segment) => segment.index === query.segment)) {
      throw new InputError(`Run ${runId} has segments 0 to ${segments.list.length - 1}; got ${String(query.segment)}.`);
    }
    conditions.push('m.segment_index = @segment');
    params.segment = query.segment;
  }
  if (query.flag !== undefined) conditions.push(flagConditions[query.flag]);
  const where = conditions.join(' AND ') || undefined;
  const total = countMemberships(db, runId, { where, params });
  const orderBy = `${sortColumns[query.sortBy]} ${query.descending ? 'DESC' : 'ASC'}`;
  const rows = membershipRecords(db, segments, { where, params, orderBy, limit, offset }).map((record) => record.membership);
  return { runId, total, offset, rows };
}
