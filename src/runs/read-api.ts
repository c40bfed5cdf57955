/**
 * Signatures of the run read/write functions the app (src/api) and the export call. They are
 * implemented in src/runs/repository.ts; this file names them so other layers can code against
 * the shapes while the implementation grows. Long lists are paged; the export streams.
 */
import type { Database } from 'better-sqlite3';
import type { SweepRow } from '../model/types.js';
import type {
  BorderlineItem,
  DecideInput,
  ExportCustomerRow,
  Membership,
  MembershipQuery,
  Movement,
  Page,
  ReviewDecision,
  ReviewItem,
  RunDetail,
  RunListItem,
  RunSummary,
  SegmentProfile,
} from './types.js';

export interface RunRepositoryFunctions {
  /** Every run, newest first. */
  listRuns(db: Database): RunListItem[];
  /** `'latest'` or an id → an existing run id; InputError naming the known ids otherwise. */
  resolveRunId(db: Database, run: number | 'latest'): number;
  /** The `refresh --json` summary of a stored run. */
  getRunSummary(db: Database, runId: number): RunSummary;
  /** Summary plus settings, features with fitted transforms, warnings, retired segments. */
  getRunDetail(db: Database, runId: number): RunDetail;
  /** The model-selection table (empty for a rescore). */
  getSweepTable(db: Database, runId: number): SweepRow[];
  /** Segments in spend order with profiles in money terms. */
  listSegments(db: Database, runId: number): SegmentProfile[];
  /** One page of customers, sortable and filterable by segment or flag. */
  getMemberships(db: Database, runId: number, query?: MembershipQuery): Page<Membership>;
  /** Borderline customers (by spend at stake) with the features that pull them between segments. */
  getBorderline(db: Database, runId: number, page?: { offset?: number; limit?: number }): Page<BorderlineItem>;
  /** The review queue ordered by spend at stake, with decisions here and last month. */
  getReviewQueue(db: Database, runId: number, page?: { offset?: number; limit?: number; status?: 'all' | 'open' | 'done' }): Page<ReviewItem>;
  /** Movement against the parent; null for a first run. */
  getMovement(db: Database, runId: number): Movement | null;
  /** Records (or replaces) a decision on a customer of the run. */
  decideReview(db: Database, input: DecideInput): ReviewDecision;
  /** Renames a segment (by index, key or current name); names are unique within a run. */
  renameSegment(db: Database, runId: number, segment: number | string, name: string): SegmentProfile;
  /** Every customer of the run (placed and too new), one prepared-statement pass, in id order. */
  iterateRunCustomers(db: Database, runId: number): IterableIterator<ExportCustomerRow>;
}
