import { describe, expect, it } from 'vitest';
import type { QueueCounts } from '../../src/api/contract.js';
import { formattersFor } from '../../renderer/src/lib/format.js';
import { queueWords, undecidedLeftOut } from '../../renderer/src/lib/queue-words.js';

const format = formattersFor('en-GB');
const queue: QueueCounts = {
  capacity: 200,
  flagged: 612,
  queued: 200,
  leftOut: { customers: 412, borderline: 380, atypical: 41, mover: 0 },
  leftOutDecided: 0,
  valueCut: 3.2,
};

describe('review queue in words', () => {
  it('says how many are queued, how many were left out, why, and what they are worth', () => {
    expect(queueWords(queue, format)).toEqual({
      queue: 'Queue: 200 of 612 flagged (capacity 200).',
      leftOut: '412 counted, not queued: 380 borderline, 41 atypical — worth less than €3.20 each.',
      decided: null,
    });
    expect(undecidedLeftOut(queue)).toBe(412);
  });

  it('names movers when there are any, and counts decisions among the left out', () => {
    const words = queueWords({ ...queue, leftOut: { ...queue.leftOut, mover: 7 }, leftOutDecided: 12 }, format);
    expect(words.leftOut).toBe('412 counted, not queued: 380 borderline, 41 atypical, 7 uncertain movers — worth less than €3.20 each.');
    expect(words.decided).toBe('12 of them decided.');
    expect(queueWords({ ...queue, leftOutDecided: 412 }, format).decided).toBe('All 412 of them decided.');
    expect(undecidedLeftOut({ ...queue, leftOutDecided: 412 })).toBe(0);
  });

  it('says nobody was left out when the queue holds every flagged customer', () => {
    const all: QueueCounts = { ...queue, flagged: 150, queued: 150, leftOut: { customers: 0, borderline: 0, atypical: 0, mover: 0 }, valueCut: null };
    expect(queueWords(all, format)).toEqual({ queue: 'Queue: 150 of 150 flagged (capacity 200).', leftOut: 'Nobody was left out: every flagged customer is in the queue.', decided: null });
  });
});
