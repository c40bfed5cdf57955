import { writeFileSync } from 'node:fs';
import { resolve } from 'node:path';
import type { RunDetail, RunListItem } from '../../api/contract.js';
import { InputError } from '../../errors.js';
import { requireExistingDatabase, withApi } from '../api-client.js';
import { runCommand, type RegisterCommand } from '../run-command.js';
import { describeRun } from './refresh.js';

function describeList(result: { runs: RunListItem[] }): string {
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

function describeDetail(detail: RunDetail): string {
  const { settings } = detail;
  return [
    describeRun(detail),
    `  as of ${detail.asOf}, ${detail.windowMonths} months, ${detail.mode}; stored ${detail.createdAt}`,
    `  features: ${detail.features.map((spec) => spec.feature).join(', ')}`,
    `  k ${settings.k === 'auto' && detail.componentsSearched ? `auto (${detail.componentsSearched.from} to ${detail.componentsSearched.to})` : settings.k}, covariance ${settings.covariance}, ${settings.criterion.toUpperCase()}, ` +
      `${settings.restarts} restarts, seed ${settings.seed}`,
    ...(detail.fittedOn !== null && detail.fittedOn < detail.customers
      ? [`  fitted on a seeded sample of ${detail.fittedOn} of the ${detail.customers} placed customers (--fit-sample); all of them scored with that model`]
      : []),
  ].join('\n');
}

interface RunsCliOptions {
  db?: string;
  run?: string;
  settingsOut?: string;
  json?: boolean;
}

/**
 * `spendmix runs --db FILE [--run ID|latest [--settings-out FILE.json]]`: the stored runs, newest
 * first; one run's detail; or that run's settings written as a file that `refresh --settings`
 * takes, so the month can be repeated exactly.
 */
export const registerRuns: RegisterCommand = (program, io, setExitCode) => {
  program
    .command('runs')
    .description('List the stored segmentation runs, newest first; show one; or write its settings to repeat it.')
    .option('--db <file>', 'the Spendmix database')
    .option('--run <id|latest>', 'one run: its summary, settings and warnings')
    .option('--settings-out <file.json>', "with --run: write the run's settings as JSON, for refresh --settings")
    .option(
      '--json',
      'print one JSON object: {runs: [{runId, parentRunId, k, covariance, bic, customers, tooNew, borderline, atypical, stability, createdAt, asOf, windowMonths, mode}]}; ' +
        'with --run the run\'s detail; with --settings-out {runId, settingsOut}',
    )
    .action(async (options: RunsCliOptions) => {
      const json = Boolean(options.json);
      setExitCode(
        await runCommand<unknown>(io, json, async () => {
          const db = requireExistingDatabase(options.db, 'runs');
          if (options.settingsOut !== undefined && options.run === undefined) throw new InputError('--settings-out needs --run ID: the run whose settings to write.');
          return withApi(db, async (api) => {
            if (options.run === undefined) {
              return { result: { runs: await api.call('listRuns', {}) }, human: (result) => describeList(result as { runs: RunListItem[] }) };
            }
            const detail = await api.call('runSummary', { runId: await api.runId(options.run, 'runs') });
            if (options.settingsOut === undefined) return { result: detail, human: () => describeDetail(detail) };
            const out = resolve(options.settingsOut);
            try {
              writeFileSync(out, `${JSON.stringify(detail.settings, null, 2)}\n`);
            } catch (error) {
              throw new InputError(`Cannot write --settings-out ${out}: ${error instanceof Error ? error.message : String(error)}`);
            }
            return {
              result: { runId: detail.runId, settingsOut: out },
              human: () => `Wrote the settings of run ${detail.runId} to ${out}; repeat the month with: refresh --db ${db} --settings ${out}`,
            };
          });
        }),
      );
    });
};
