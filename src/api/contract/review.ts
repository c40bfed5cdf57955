import { z } from 'zod';
import { named, nonEmpty, pageLimit, pageOffset, plainLine, plainName, plainText, runId } from './fields.js';
import type { AtypicalWhy, BorderlineWhy } from './certainty.js';
import { segmentReference, type MembershipRow } from './segments.js';

/**
 * The Review screen and `review`: the queue, decisions, and segment names.
 *
 * Flagged customers (borderline, atypical, and optionally low-confidence movers) are ordered by
 * what a decision is worth: spend at stake (net spend in the window, EUR, 0 when negative) ×
 * uncertainty (1 − confidence for borderline customers and movers; for a customer who is only
 * atypical, 1 − density / density at the atypical cut, how far below the cut they sit, in [0, 1);
 * the larger where both apply). The first `reviewCapacity` of them (a run setting) are the queue;
 * the rest are counted, not queued, by reason, and can be accepted in bulk (`acceptUnqueued`).
 * Every flagged customer, queued or not, may take a decision; nobody else.
 */

export const reviewActions = ['keep', 'move', 'exclude'] as const;
export type ReviewAction = (typeof reviewActions)[number];
export const reviewStatuses = ['all', 'open', 'done'] as const;
/** queued: the capacity-limited queue; unqueued: flagged beyond the capacity (counted, not queued); flagged: both. */
export const reviewScopes = ['queued', 'unqueued', 'flagged'] as const;
export type ReviewScope = (typeof reviewScopes)[number];

export const reviewQueueInput = z.strictObject({
  runId: named(runId, 'the run', '--run'),
  offset: pageOffset,
  limit: pageLimit,
  status: named(z.enum(reviewStatuses).default('all'), 'all, open (undecided) or done', '--status'),
  scope: named(
    z.enum(reviewScopes).default('queued'),
    'queued (the queue, up to the capacity), unqueued (flagged beyond the capacity) or flagged (both)',
    '--scope',
  ),
});
export type ReviewQueueQuery = z.output<typeof reviewQueueInput>;

export type ReviewReason = 'borderline' | 'atypical' | 'mover';

/** The review queue of a run at its capacity: who is flagged, who is queued, and who is counted beyond it and why. */
export interface QueueCounts {
  /** The run's review capacity (customers one person can review this month). */
  capacity: number;
  /** Customers flagged for review: borderline, atypical, or low-confidence movers. */
  flagged: number;
  /** In the queue: the flagged customers whose decision is worth most, at most `capacity`. */
  queued: number;
  /**
   * Flagged beyond the capacity: counted, not queued. By reason, a customer with two reasons
   * counting under both; `customers` counts each once.
   */
  leftOut: { customers: number; borderline: number; atypical: number; mover: number };
  /** Of those left out, how many have a decision (for example accepted in bulk). */
  leftOutDecided: number;
  /** What the last queued customer's decision is worth (EUR × uncertainty); the left out are worth less. Null when nobody is left out. */
  valueCut: number | null;
}

/** A flagged customer; the queue is ordered by `value` = spend at stake (`revenue`, EUR) × `uncertainty`. */
export interface ReviewItem extends MembershipRow {
  reasons: ReviewReason[];
  /** What a decision on this customer is worth: max(0, revenue) × uncertainty (see the file comment). */
  value: number;
  /** In [0, 1]: 1 − confidence (borderline, mover) or how far below the atypical cut (atypical only). */
  uncertainty: number;
  /** Which features pull between the top two segments; for borderline customers and movers, else null. */
  why: BorderlineWhy | null;
  /** Which features are extreme, in original units and percentiles; for atypical customers, else null. */
  atypicalWhy: AtypicalWhy | null;
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
  /** Customers in the asked scope and status. */
  total: number;
  /** Decided customers in the asked scope (whatever the status filter). */
  done: number;
  offset: number;
  rows: ReviewItem[];
  /** The queue at the run's capacity, and who was left out and why. */
  queue: QueueCounts;
}

/**
 * "Accept the rest": a keep decision (the model's segment) for every flagged customer beyond the
 * capacity who has no decision yet, in one transaction.
 */
export const acceptUnqueuedInput = z.strictObject({
  runId: named(runId, 'the run', '--run'),
  note: named(plainText(2000).default(''), 'a note kept with each decision', '--note'),
  reviewer: named(plainLine(200).default(''), 'who decided (default: the user running the command)', '--reviewer <name>'),
});
export type AcceptUnqueuedInput = z.output<typeof acceptUnqueuedInput>;
export interface AcceptUnqueuedResult {
  runId: number;
  /** Keep decisions recorded now. */
  accepted: number;
  /** Left-out customers who already had a decision (left as they were). */
  alreadyDecided: number;
  queue: QueueCounts;
}

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
