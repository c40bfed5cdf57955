import {
  acceptUnqueuedInput,
  decideReviewInput,
  reviewQueueInput,
  type AcceptUnqueuedResult,
  type ApiInput,
  type QueueCounts,
  type ReviewDecision,
  type ReviewItem,
  type ReviewQueueQuery,
} from '../../api/contract.js';
import { onGroupRun, runGroup } from '../api-client.js';
import { describeQueueCounts } from '../segment-words.js';
import type { RegisterCommand } from '../run-command.js';
import { addSchemaOptions, inputFromFlags, schemaOptions } from '../schema-options.js';

const probability = (value: number | null) => (value === null ? '-' : value.toFixed(3));

const euros = (value: number) => `€${value.toFixed(2)}`;

const scopeWords: Record<ReviewQueueQuery['scope'], string> = {
  queued: 'in the queue',
  unqueued: 'flagged beyond the capacity',
  flagged: 'flagged',
};

function describeQueue(result: { runId: number; scope: ReviewQueueQuery['scope']; total: number; offset: number; items: ReviewItem[]; queue: QueueCounts }): string {
  const counts = `  ${describeQueueCounts(result.queue)}`;
  if (result.total === 0) return `Run ${result.runId}: nobody ${scopeWords[result.scope]} to review.
${counts}`;
  return [
    `Run ${result.runId}: ${result.total} customers ${scopeWords[result.scope]} (showing ${result.offset + 1}–${result.offset + result.items.length}), ` +
      'by what a decision is worth (spend at stake × uncertainty)',
    counts,
    ...result.items.map(
      (item) =>
        `  ${item.customerId}  ${euros(item.revenue)} × ${item.uncertainty.toFixed(2)} = ${euros(item.value)}  ${item.reasons.join('+')}  ` +
        `${item.segmentName} ${probability(item.confidence)}` +
        `${item.secondSegmentName ? ` / ${item.secondSegmentName} ${probability(item.secondProbability)}` : ''}` +
        `${item.why ? `  — ${item.why.text}` : ''}` +
        `${item.atypicalWhy ? `  — ${item.atypicalWhy.text}` : ''}` +
        `${item.previousSegmentName ? `  (last month: ${item.previousSegmentName}${item.previousDecision ? `, ${item.previousDecision.action}` : ''})` : ''}` +
        `${item.decision ? `  [decided: ${item.decision.action}${item.decision.segmentName ? ` ${item.decision.segmentName}` : ''}]` : ''}`,
    ),
  ].join('\n');
}

function describeAccepted(result: AcceptUnqueuedResult): string {
  return (
    `Run ${result.runId}: kept the model's segment for ${result.accepted} flagged customers beyond the capacity` +
    `${result.alreadyDecided > 0 ? ` (${result.alreadyDecided} already had a decision and were left as they were)` : ''}.\n  ${describeQueueCounts(result.queue)}`
  );
}

function describeDecision(result: { runId: number; customerId: string; decision: ReviewDecision | null }): string {
  const { decision } = result;
  if (!decision) return `Run ${result.runId}, customer ${result.customerId}: no decision`;
  return `Run ${result.runId}, customer ${result.customerId}: ${decision.action}${decision.segmentName ? ` → ${decision.segmentName}` : ''}${decision.note ? ` (${decision.note})` : ''}`;
}

const listFlags = schemaOptions(reviewQueueInput.shape, ['runId']);
const decideFlags = schemaOptions(decideReviewInput.shape, ['runId']);
const acceptFlags = schemaOptions(acceptUnqueuedInput.shape, ['runId']);

/**
 * `spendmix review --db FILE --run ID|latest (list [--scope queued|unqueued|flagged] | decide
 * --customer C --action keep|move|exclude [--segment S] [--note T] [--reviewer R] | accept-rest
 * [--reviewer R] [--note T])`: the Review screen's queue, decisions and "Accept the rest", through
 * the same API calls. Only flagged customers take a decision (src/runs/review-decisions.ts).
 */
export const registerReview: RegisterCommand = (program, io, setExitCode) => {
  const review = runGroup(program, 'review', "The review queue of a run (borderline and atypical customers by spend at stake) and the analyst's decisions.");

  addSchemaOptions(
    review.command('list').description('List the queue (or the flagged customers beyond it), by what a decision is worth: spend at stake × uncertainty.'),
    listFlags,
  )
    .option('--json', 'print one JSON object {runId, scope, total, done, offset, items, queue}')
    .action(
      onGroupRun(review, io, setExitCode, async (api, runId, options) => {
        const input = { ...inputFromFlags(listFlags, options), runId } as ApiInput<'reviewQueue'>;
        const page = await api.call('reviewQueue', input);
        const scope = (input.scope ?? 'queued') as ReviewQueueQuery['scope'];
        return {
          result: { runId, scope, total: page.total, done: page.done, offset: page.offset, items: page.rows, queue: page.queue },
          human: describeQueue,
        };
      }),
    );

  addSchemaOptions(
    review.command('decide').description('Record a decision on a customer in the queue: keep, move to a segment, or exclude from campaigns.'),
    decideFlags,
  )
    .option('--json', 'print one JSON object {runId, customerId, decision}')
    .action(
      onGroupRun(review, io, setExitCode, async (api, runId, options) => {
        // Who decided: the session's user unless --reviewer names someone.
        const input = { reviewer: process.env.USER ?? '', ...inputFromFlags(decideFlags, options), runId };
        const item = await api.call('decideReview', input as ApiInput<'decideReview'>);
        return { result: { runId, customerId: item.customerId, decision: item.decision }, human: describeDecision };
      }),
    );

  addSchemaOptions(
    review
      .command('accept-rest')
      .description("Keep the model's segment for every flagged customer beyond the capacity who has no decision yet (decisions already made stay)."),
    acceptFlags,
  )
    .option('--json', 'print one JSON object {runId, accepted, alreadyDecided, queue}')
    .action(
      onGroupRun(review, io, setExitCode, async (api, runId, options) => {
        const input = { reviewer: process.env.USER ?? '', ...inputFromFlags(acceptFlags, options), runId };
        return { result: await api.call('acceptUnqueued', input as ApiInput<'acceptUnqueued'>), human: describeAccepted };
      }),
    );
};
