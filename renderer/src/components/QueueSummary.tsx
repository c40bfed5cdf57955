/*
 * How many customers the review queue holds, how many were left out beyond the capacity and why,
 * and "Accept the rest": keep every left-out customer without a decision in the model's segment.
 * Test ids: queue-summary, queue-counts, queue-left-out, queue-accept-rest, queue-accepted.
 */
import { useState } from 'react';
import type { ApiError, QueueCounts } from '../../../src/api/contract.js';
import { useApi, useFormat } from '../app/client-context.js';
import { queueWords, undecidedLeftOut } from '../lib/queue-words.js';
import { toApiError } from '../lib/task-state.js';
import { ErrorNote } from './Notice.js';

export function QueueSummary({ runId, queue, onAccepted }: { runId: number; queue: QueueCounts; onAccepted: (queue: QueueCounts) => void }) {
  const api = useApi();
  const format = useFormat();
  const [busy, setBusy] = useState(false);
  const [failure, setFailure] = useState<ApiError | null>(null);
  const [outcome, setOutcome] = useState<string | null>(null);
  const words = queueWords(queue, format);
  const open = undecidedLeftOut(queue);

  const acceptRest = () => {
    setBusy(true);
    setFailure(null);
    api.acceptUnqueued({ runId }).then(
      (result) => {
        setBusy(false);
        setOutcome(
          `Kept ${format.count(result.accepted)} in the model's segment` +
            (result.alreadyDecided ? `; ${format.count(result.alreadyDecided)} already had a decision and were left as they were.` : '.'),
        );
        onAccepted(result.queue);
      },
      (error: unknown) => {
        setBusy(false);
        setFailure(toApiError(error));
      },
    );
  };

  return (
    <div className="queue-summary" data-testid="queue-summary">
      <p>
        <strong data-testid="queue-counts">{words.queue}</strong> <span data-testid="queue-left-out">{words.leftOut}</span>
        {words.decided ? ` ${words.decided}` : ''}
      </p>
      {queue.leftOut.customers > 0 ? (
        <div className="queue-actions">
          <button
            type="button"
            className="button"
            disabled={busy || open === 0}
            onClick={acceptRest}
            title="Keep every flagged customer beyond the capacity who has no decision yet in the segment the model gives them"
            data-testid="queue-accept-rest"
          >
            {open === 0 ? 'The rest is accepted' : `Accept the rest (${format.count(open)})`}
          </button>
          <span className="hint">Keeps them in the model's segment, recorded as decisions; you can still change any of them under "not queued".</span>
        </div>
      ) : null}
      {outcome ? (
        <p className="quiet" data-testid="queue-accepted" aria-live="polite">
          {outcome}
        </p>
      ) : null}
      {failure ? <ErrorNote error={failure} /> : null}
    </div>
  );
}
