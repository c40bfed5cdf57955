import { decideReviewInput, reviewQueueInput, type ApiInput, type ReviewDecision, type ReviewItem } from '../../api/contract.js';
import { onGroupRun, runGroup } from '../api-client.js';
import type { RegisterCommand } from '../run-command.js';
import { addSchemaOptions, inputFromFlags, schemaOptions } from '../schema-options.js';

const probability = (value: number | null) => (value === null ? '-' : value.toFixed(3));

function describeQueue(result: { runId: number; total: number; offset: number; items: ReviewItem[] }): string {
  if (result.total === 0) return `Run ${result.runId} has nobody to review.`;
  return [
    `Run ${result.runId}: ${result.total} customers to review (showing ${result.offset + 1}–${result.offset + result.items.length}), by spend at stake`,
    ...result.items.map(
      (item) =>
        `  ${item.customerId}  €${item.revenue.toFixed(2)}  ${item.reasons.join('+')}  ${item.segmentName} ${probability(item.confidence)}` +
        `${item.secondSegmentName ? ` / ${item.secondSegmentName} ${probability(item.secondProbability)}` : ''}` +
        `${item.why ? `  — ${item.why.text}` : ''}` +
        `${item.previousSegmentName ? `  (last month: ${item.previousSegmentName}${item.previousDecision ? `, ${item.previousDecision.action}` : ''})` : ''}` +
        `${item.decision ? `  [decided: ${item.decision.action}${item.decision.segmentName ? ` ${item.decision.segmentName}` : ''}]` : ''}`,
    ),
  ].join('\n');
}

function describeDecision(result: { runId: number; customerId: string; decision: ReviewDecision | null }): string {
  const { decision } = result;
  if (!decision) return `Run ${result.runId}, customer ${result.customerId}: no decision`;
  return `Run ${result.runId}, customer ${result.customerId}: ${decision.action}${decision.segmentName ? ` → ${decision.segmentName}` : ''}${decision.note ? ` (${decision.note})` : ''}`;
}

const listFlags = schemaOptions(reviewQueueInput.shape, ['runId']);
const decideFlags = schemaOptions(decideReviewInput.shape, ['runId']);

/**
 * `spendmix review --db FILE --run ID|latest (list | decide --customer C --action keep|move|exclude
 * [--segment S] [--note T] [--reviewer R])`: the Review screen's queue and decisions, through the
 * same API calls. Only customers in the queue take a decision (src/runs/review-decisions.ts).
 */
export const registerReview: RegisterCommand = (program, io, setExitCode) => {
  const review = runGroup(program, 'review', "The review queue of a run (borderline and atypical customers by spend at stake) and the analyst's decisions.");

  addSchemaOptions(review.command('list').description('List the queue, highest spend at stake first.'), listFlags)
    .option('--json', 'print one JSON object {runId, total, offset, items}')
    .action(
      onGroupRun(review, io, setExitCode, async (api, runId, options) => {
        const page = await api.call('reviewQueue', { ...inputFromFlags(listFlags, options), runId });
        return { result: { runId, total: page.total, offset: page.offset, items: page.rows }, human: describeQueue };
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
};
