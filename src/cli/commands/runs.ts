import { listRuns } from '../../runs/repository.js';
import type { RunListItem } from '../../runs/types.js';
import { runCommand, type RegisterCommand } from '../run-command.js';
import { openExistingDatabase } from './refresh.js';

function describe(result: { runs: RunListItem[] }): string {
  if (result.runs.length === 0) return 'No runs yet; run refresh first.';
  return [
    'run  parent  as-of       mode     k  covariance  customers  too new  borderline  atypical  stability',
    ...result.runs.map((run) =>
      [
        String(run.runId).padEnd(4),
        String(run.parentRunId ?? '-').padEnd(6),
        run.asOf.padEnd(10),
        run.mode.padEnd(7),
        String(run.k).padStart(2),
        run.covariance.padEnd(10),
        String(run.customers).padStart(9),
        String(run.tooNew).padStart(7),
        String(run.borderline).padStart(10),
        String(run.atypical).padStart(8),
        run.stability === null ? '        -' : run.stability.toFixed(3).padStart(9),
      ].join('  '),
    ),
  ].join('\n');
}

/** `spendmix runs --db FILE`: the stored runs, newest first. */
export const registerRuns: RegisterCommand = (program, io, setExitCode) => {
  program
    .command('runs')
    .description('List the stored segmentation runs, newest first.')
    .option('--db <file>', 'the Spendmix database')
    .option('--json', 'print one JSON object {runs: [{runId, parentRunId, createdAt, asOf, windowMonths, mode, k, covariance, bic, customers, tooNew, borderline, atypical, stability}]}')
    .action(async (options: { db?: string; json?: boolean }) => {
      const json = Boolean(options.json);
      setExitCode(
        await runCommand(io, json, async () => {
          const db = openExistingDatabase(options.db, 'runs');
          try {
            return { result: { runs: listRuns(db) }, human: describe };
          } finally {
            db.close();
          }
        }),
      );
    });
};
