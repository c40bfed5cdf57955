/**
 * Review decisions (DESIGN.md §7): keep, move to a segment, or exclude from campaigns, with a
 * note, the reviewer and the time.
 *
 * The one rule for who may get a decision, for the app and the CLI alike: customers the run flags
 * for review (borderline, atypical, or low-confidence movers where the run looks for them), whether
 * they are in the capacity-limited queue or counted beyond it, and only they. Flagged customers
 * are the ones the Review screen shows (the queue, and the rest on request) and the ones "accept
 * the rest" settles in bulk; a decision on anyone else would change an export (an exclusion drops
 * the customer) without the customer ever being shown for review. A refused call stores nothing.
 */
import type { Database } from 'better-sqlite3';
import type { AcceptUnqueuedInput, AcceptUnqueuedResult, DecideReviewInput, ReviewItem } from '../api/contract.js';
import { InputError } from '../errors.js';
import { reviewItem } from './read/review-queue.js';
import { queueCounts } from './read/review-counts.js';
import { runSegments } from './read/run-segments.js';
import { storedRun } from './read/stored-run.js';

/** The one rule: a customer may take a decision when the run flags them for review (the review column's bits). */
export function mayDecide(member: { review: number }): boolean {
  return member.review > 0;
}

/** Records (or replaces) the decision on a flagged customer; returns the customer's review item with it. */
export function decideReview(db: Database, input: DecideReviewInput): ReviewItem {
  const { runId, customerId } = input;
  storedRun(db, runId);
  const segments = runSegments(db, runId);
  db.transaction(() => {
    const member = db.prepare('SELECT segment_index, review FROM run_memberships WHERE run_id = ? AND customer_id = ?').get(runId, customerId) as
      | { segment_index: number | null; review: number }
      | undefined;
    if (!member) throw new InputError(`Customer "${customerId}" is not part of run ${runId}; nothing was stored.`);
    if (!mayDecide(member)) {
      throw new InputError(
        `Customer "${customerId}" is not flagged for review in run ${runId}; only flagged customers (borderline, atypical, ` +
          'or movers the run looks for), queued or counted beyond the capacity, take a review decision, so nothing was stored.',
      );
    }
    // Flagged customers are placed, so "keep" always has the model segment to keep.
    const segmentKey =
      input.action === 'move' ? segments.find(input.segment!).key : input.action === 'keep' ? segments.keyOf(member.segment_index) : null;
    db.prepare(
      `INSERT INTO review_decisions (run_id, customer_id, action, segment_key, note, reviewer, decided_at, carried_from_run_id)
       VALUES (?, ?, ?, ?, ?, ?, ?, NULL)
       ON CONFLICT (run_id, customer_id) DO UPDATE SET action = excluded.action, segment_key = excluded.segment_key,
         note = excluded.note, reviewer = excluded.reviewer, decided_at = excluded.decided_at, carried_from_run_id = NULL`,
    ).run(runId, customerId, input.action, segmentKey, input.note || null, input.reviewer || null, new Date().toISOString());
  }).immediate();
  return reviewItem(db, runId, customerId)!;
}

/**
 * "Accept the rest": a keep decision (the model's segment) for every flagged customer counted
 * beyond the capacity who has no decision yet, in one transaction; decisions already made stay.
 */
export function acceptUnqueued(db: Database, input: AcceptUnqueuedInput): AcceptUnqueuedResult {
  const { runId } = input;
  storedRun(db, runId);
  const { alreadyDecided, accepted } = db
    .transaction(() => {
      const decided = db
        .prepare(
          `SELECT count(*) FROM run_memberships m JOIN review_decisions d ON d.run_id = m.run_id AND d.customer_id = m.customer_id
            WHERE m.run_id = ? AND m.review > 0 AND m.queued = 0`,
        )
        .pluck()
        .get(runId) as number;
      // The same rule as one decision: only flagged customers (review > 0), here those beyond the capacity.
      const inserted = db
        .prepare(
          `INSERT INTO review_decisions (run_id, customer_id, action, segment_key, note, reviewer, decided_at, carried_from_run_id)
           SELECT m.run_id, m.customer_id, 'keep', s.segment_key, @note, @reviewer, @decidedAt, NULL
             FROM run_memberships m JOIN run_segments s ON s.run_id = m.run_id AND s.segment_index = m.segment_index
            WHERE m.run_id = @runId AND m.review > 0 AND m.queued = 0
              AND NOT EXISTS (SELECT 1 FROM review_decisions d WHERE d.run_id = m.run_id AND d.customer_id = m.customer_id)`,
        )
        .run({ runId, note: input.note || null, reviewer: input.reviewer || null, decidedAt: new Date().toISOString() }).changes;
      return { alreadyDecided: decided, accepted: inserted };
    })
    .immediate();
  return { runId, accepted, alreadyDecided, queue: queueCounts(db, runId) };
}
