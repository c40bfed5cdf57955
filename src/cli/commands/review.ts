import { InputError } from '../../errors.js';
import { decideReview, getReviewQueue, resolveRunId } from '../../runs/repository.js';
import type { ReviewAction, ReviewDecision, ReviewItem } from '../../runs/types.js';
import { parseInteger, runCommand, type RegisterCommand } from '../run-command.js';
import { openExistingDatabase } from './refresh.js';

interface ReviewCliOptions {
  db?: string;
  run?: string;
  json?: boolean;
}

function runOption(raw: string | undefined): number | 'latest' {
  if (raw === undefined) throw new InputError('review needs --run ID (or --run latest).');
  return raw === 'latest' ? 'latest' : parseInteger('--run', 1)(raw);
}

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

function describeDecision(result: { runId: number; customerId: string; decision: ReviewDecision }): string {
  const { decision } = result;
  return `Run ${result.runId}, customer ${result.customerId}: ${decision.action}${decision.segmentName ? ` → ${decision.segmentName}` : ''}${decision.note ? ` (${decision.note})` : ''}`;
}

/** `spendmix review --db FILE --run ID (list | decide --customer C --action keep|move|exclude [--segment S] [--note T])`. */
export const registerReview: RegisterCommand = (program, io, setExitCode) => {
  const review = program
    .command('review')
    .description("The review queue of a run (borderline and atypical customers by spend at stake) and the analyst's decisions.")
    .option('--db <file>', 'the Spendmix database')
    .option('--run <id>', 'run id, or latest');

  review
    .command('list')
    .description('List the queue, highest spend at stake first.')
    .option('--offset <n>', 'skip this many items', parseInteger('--offset', 0), 0)
    .option('--limit <n>', 'show at most this many items', parseInteger('--limit', 1, 10_000), 50)
    .option('--status <status>', 'all, open (undecided) or done', 'all')
    .option('--json', 'print one JSON object {runId, total, offset, items}')
    .action(async (options: { offset: number; limit: number; status: string; json?: boolean }) => {
      const parent = review.opts<ReviewCliOptions>();
      const json = Boolean(options.json || parent.json);
      setExitCode(
        await runCommand(io, json, async () => {
          const run = runOption(parent.run);
          if (!['all', 'open', 'done'].includes(options.status)) throw new InputError(`--status must be all, open or done; got "${options.status}".`);
          const db = openExistingDatabase(parent.db, 'review');
          try {
            const runId = resolveRunId(db, run);
            const page = getReviewQueue(db, runId, { offset: options.offset, limit: options.limit, status: options.status as 'all' | 'open' | 'done' });
            return { result: { runId, ...page }, human: describeQueue };
          } finally {
            db.close();
          }
        }),
      );
    });

  review
    .command('decide')
    .description('Record a decision on a customer of the run: keep, move to a segment, or exclude from campaigns.')
    .option('--customer <id>', 'customer id')
    .option('--action <action>', 'keep, move or exclude')
    .option('--segment <segment>', 'for move: target segment (name, key or index)')
    .option('--note <text>', 'a note kept with the decision')
    .option('--reviewer <name>', 'who decided (default: the user name of this session)')
    .option('--json', 'print one JSON object {runId, customerId, decision}')
    .action(async (options: { customer?: string; action?: string; segment?: string; note?: string; reviewer?: string; json?: boolean }) => {
      const parent = review.opts<ReviewCliOptions>();
      const json = Boolean(options.json || parent.json);
      setExitCode(
        await runCommand(io, json, async () => {
          const run = runOption(parent.run);
          if (!options.customer) throw new InputError('review decide needs --customer ID.');
          if (!options.action || !['keep', 'move', 'exclude'].includes(options.action)) {
            throw new InputError(`review decide needs --action keep, move or exclude${options.action ? `; got "${options.action}"` : ''}.`);
          }
          if (options.action === 'move' && !options.segment) throw new InputError('--action move needs --segment S (name, key or index).');
          const db = openExistingDatabase(parent.db, 'review');
          try {
            const runId = resolveRunId(db, run);
            const decision = decideReview(db, {
              runId,
              customerId: options.customer,
              action: options.action as ReviewAction,
              segment: options.segment,
              note: options.note,
              reviewer: options.reviewer ?? process.env.USER ?? undefined,
            });
            return { result: { runId, customerId: options.customer, decision }, human: describeDecision };
          } finally {
            db.close();
          }
        }),
      );
    });
};
