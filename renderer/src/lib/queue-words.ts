import type { QueueCounts } from '../../../src/api/contract.js';
import type { Formatters } from './format.js';

/**
 * The review queue in words, as Certainty and Review show it:
 *   queue:   "Queue: 200 of 612 flagged (capacity 200)."
 *   leftOut: "412 counted, not queued: 380 borderline, 41 atypical — worth less than €3.20 each."
 *   decided: "300 of them decided." (null when none)
 * A customer with two reasons counts under both in the breakdown, so the reasons may add up to
 * more than the customers left out.
 */
export function queueWords(queue: QueueCounts, format: Formatters): { queue: string; leftOut: string; decided: string | null } {
  const head = `Queue: ${format.count(queue.queued)} of ${format.count(queue.flagged)} flagged (capacity ${format.count(queue.capacity)}).`;
  if (queue.leftOut.customers === 0) return { queue: head, leftOut: 'Nobody was left out: every flagged customer is in the queue.', decided: null };
  const reasons = (
    [
      ['borderline', queue.leftOut.borderline],
      ['atypical', queue.leftOut.atypical],
      ['uncertain movers', queue.leftOut.mover],
    ] as const
  )
    .filter(([, count]) => count > 0)
    .map(([reason, count]) => `${format.count(count)} ${reason}`)
    .join(', ');
  const worth = queue.valueCut === null ? '' : ` — worth less than ${format.eurosPrecise(queue.valueCut)} each`;
  const decided =
    queue.leftOutDecided === 0
      ? null
      : queue.leftOutDecided >= queue.leftOut.customers
        ? `All ${format.count(queue.leftOutDecided)} of them decided.`
        : `${format.count(queue.leftOutDecided)} of them decided.`;
  return { queue: head, leftOut: `${format.count(queue.leftOut.customers)} counted, not queued: ${reasons}${worth}.`, decided };
}

/** Flagged customers beyond the capacity still without a decision: what "Accept the rest" would keep. */
export function undecidedLeftOut(queue: QueueCounts): number {
  return Math.max(0, queue.leftOut.customers - queue.leftOutDecided);
}
