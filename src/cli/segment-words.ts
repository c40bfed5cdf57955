/** Words the commands share about a run's segments and review queue (refresh, segments, review). */
import type { QueueCounts, SegmentationMethod } from '../api/contract.js';

export const segmentationWords: Record<SegmentationMethod, string> = {
  auto: 'the entropy change point',
  level: 'a chosen number of segments',
  hand: 'merged and split by hand',
};

const euros = (value: number) => `€${value.toFixed(2)}`;

/** The queue at the capacity, who was left out and why: what the Certainty and Review screens say. */
export function describeQueueCounts(queue: QueueCounts): string {
  const head = `queue: ${queue.queued} of ${queue.flagged} flagged (capacity ${queue.capacity})`;
  if (queue.leftOut.customers === 0) return head;
  const reasons = (['borderline', 'atypical', 'mover'] as const)
    .filter((reason) => queue.leftOut[reason] > 0)
    .map((reason) => `${queue.leftOut[reason]} ${reason}`)
    .join(', ');
  const worth = queue.valueCut === null ? '' : `, each worth less than ${euros(queue.valueCut)}`;
  return `${head}; ${queue.leftOut.customers} counted, not queued (${reasons}${worth}); ${queue.leftOutDecided} of them decided`;
}
