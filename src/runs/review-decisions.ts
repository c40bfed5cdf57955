/**
 * Review decisions (DESIGN.md §7): keep, move to a segment, or exclude from campaigns, with a
 * note, the reviewer and the time.
 *
 * The one rule for who may get a decision, for the app and the CLI alike: customers in the run's
 * review queue, and only they. The queue is what the Review screen shows and what the analyst is
 * asked to judge; a decision on anyone else would change an export (an exclusion drops the
 * customer) without ever being shown in the queue. A refused call stores nothing.
 */
import type { Database } from 'better-sqlite3';
import type { AcceptUnqueuedInput, AcceptUnqueuedResult, DecideReviewInput, ReviewItem } from '../api/contract.js';
import { InputError } from '../errors.js';
import { reviewItem } from './read/review-queue.js';
import { runSegments } from './read/run-segments.js';
import { storedRun } from './read/stored-run.js';

/** Records (or replaces) the decision on a queued customer; returns the customer's queue item with it. */
export function decideReview(db: Database, input: DecideReviewInput): ReviewItem {
  const { runId, customerId } = input;
  storedRun(db, runId);
  const segments = runSegments(db, runId);
  db.transaction(() => {
    const member = db.prepare('SELECT segment_index, review FROM run_memberships WHERE run_id = ? AND customer_id = ?').get(runId, customerId) as
      | { segment_index: number | null; review: number }
      | undefined;
    if (!member) throw new InputError(`Customer "${customerId}" is not part of run ${runId}; nothing was stored.`);
    if (member.review === 0) {
      throw new InputError(
        `Customer "${customerId}" is not in the review queue of run ${runId}; only queued customers (borderline, atypical, ` +
          'or movers the run queues) take a review decision, so nothing was stored.',
      );
    }
    // Queued customers are placed, so "keep" always has the model segment to keep.
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

/** Keep decisions for every flagged customer beyond the capacity who has none yet, in one transaction. */
export function acceptUnqueued(_db: Database, _input: AcceptUnqueuedInput): AcceptUnqueuedResult {
  throw new Error('Accepting the rest is being built.');
}
