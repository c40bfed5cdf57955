import { z } from 'zod';
import { named, nonEmpty, pageLimit, pageOffset, plainLine, plainName, plainText, runId } from './fields.js';
import type { BorderlineWhy } from './certainty.js';
import type { MembershipRow } from './segments.js';

/** The Review screen and `review`: the queue, decisions, and segment names. */

export const reviewActions = ['keep', 'move', 'exclude'] as const;
export type ReviewAction = (typeof reviewActions)[number];
export const reviewStatuses = ['all', 'open', 'done'] as const;

export const reviewQueueInput = z.strictObject({
  runId: named(runId, 'the run', '--run'),
  offset: pageOffset,
  limit: pageLimit,
  status: named(z.enum(reviewStatuses).default('all'), 'all, open (undecided) or done', '--status'),
});
export type ReviewQueueQuery = z.output<typeof reviewQueueInput>;

export type ReviewReason = 'borderline' | 'atypical' | 'mover';

/** A queued customer; `revenue` (spend in the window) is the spend at stake the queue is ordered by. */
export interface ReviewItem extends MembershipRow {
  reasons: ReviewReason[];
  why: BorderlineWhy | null;
  /** The customer's model features (original units) beside the medians of the top two segments. */
  featureComparison: { feature: string; label: string; value: number | null; topMedian: number | null; secondMedian: number | null }[];
  /** Last month (the parent run): the customer's segment there and the decision made there. */
  previousSegmentName: string | null;
  previousDecision: ReviewDecision | null;
}
export interface ReviewDecision {
  action: ReviewAction;
  /** The segment the decision places the customer in (keep: the model's; move: the target), by key and name. */
  segmentKey: string | null;
  segmentName: string | null;
  note: string | null;
  reviewer: string | null;
  decidedAt: string;
  /** Run the decision was made in when carried over from an earlier month; null when made here. */
  carriedFromRunId: number | null;
}
export interface ReviewQueuePage {
  runId: number;
  total: number;
  done: number;
  offset: number;
  rows: ReviewItem[];
}

/** A segment of a run: its index, or its key or name as text. */
const segmentReference = z.union([z.number().int().min(0), nonEmpty]);

export const decideReviewInput = z
  .strictObject({
    runId: named(runId, 'the run', '--run'),
    customerId: named(nonEmpty, 'the customer', '--customer <id>'),
    action: named(z.enum(reviewActions), 'keep, move or exclude', '--action'),
    segment: named(segmentReference.optional(), 'the target segment of a move (index, key or name)', '--segment <segment>'),
    note: named(plainText(2000).default(''), 'a note kept with the decision', '--note'),
    reviewer: named(plainLine(200).default(''), 'who decided (default: the user running the command)', '--reviewer <name>'),
  })
  .refine((value) => value.action !== 'move' || value.segment !== undefined, {
    message: 'a move needs the target segment',
    path: ['segment'],
  });
export type DecideReviewInput = z.output<typeof decideReviewInput>;

export const renameSegmentInput = z.strictObject({
  runId: named(runId, 'the run', '--run'),
  segment: named(segmentReference, 'the segment (index, key or current name)', '--segment <segment>'),
  name: named(plainName(80), 'the new name', '--name <text>'),
});
export type RenameSegmentInput = z.output<typeof renameSegmentInput>;
