import { existsSync } from 'node:fs';
import { InputError } from '../../errors.js';
import { covarianceTypes, type CovarianceType } from '../../model/index.js';
import { runSegmentation } from '../../runs/run.js';
import type { RefreshMode, RunSummary } from '../../runs/types.js';
import { openDatabase, type Database } from '../../store/database.js';
import { parseInteger, runCommand, type RegisterCommand } from '../run-command.js';

interface RefreshCliOptions {
  db?: string;
  asOf?: string;
  windowMonths: number;
  mode: string;
  k: string;
  kMax?: number;
  covariance: string;
  restarts?: number;
  seed?: number;
  parent?: number;
  json?: boolean;
}

/** Opens an existing database for the run commands; a missing file is bad input, not a new database. */
export function openExistingDatabase(path: string | undefined, command: string): Database {
  if (!path) throw new InputError(`${command} needs --db FILE: the Spendmix database.`);
  if (!existsSync(path)) throw new InputError(`Database ${path} does not exist; create it with "import" or "demo --db" first.`);
  return openDatabase(path);
}

const percent = (share: number) => `${(share * 100).toFixed(1)}%`;

function describe(summary: RunSummary): string {
  return [
    `Run ${summary.runId}${summary.parentRunId !== null ? ` (parent ${summary.parentRunId})` : ''}: k = ${summary.k}, ${summary.covariance} covariance, BIC ${summary.bic.toFixed(1)}`,
    `  ${summary.customers} customers placed, ${summary.tooNew} too new to place; ${summary.borderline} borderline, ${summary.atypical} atypical`,
    ...summary.segments.map(
      (segment) => `  ${segment.name}: ${segment.customers} customers (${percent(segment.share)}), ${percent(segment.revenueShare)} of revenue`,
    ),
    `  stability against the parent (adjusted Rand index): ${summary.stability === null ? 'n/a (first run)' : summary.stability.toFixed(3)}`,
  ].join('\n');
}

/**
 * `spendmix refresh --db FILE --as-of YYYY-MM-DD [--window-months N] [--mode refit|rescore] [--k N|auto]
 * [--k-max N] [--covariance full|diag|spherical|tied|auto] [--restarts N] [--seed N] [--parent ID]` (DESIGN.md §10).
 */
export const registerRefresh: RegisterCommand = (program, io, setExitCode) => {
  program
    .command('refresh')
    .description("Run this month's segmentation: features, fit (or the parent's model), memberships, names, movement, review queue.")
    .option('--db <file>', 'the Spendmix database')
    .option('--as-of <date>', 'last day of the window, YYYY-MM-DD')
    .option('--window-months <n>', 'trailing window in months', parseInteger('--window-months', 1, 120), 12)
    .option('--mode <mode>', 'refit (fit anew, carry names by matching) or rescore (apply the parent model)', 'refit')
    .option('--k <n|auto>', 'number of segments, or auto to choose by BIC', 'auto')
    .option('--k-max <n>', 'largest k tried with --k auto (default 8)', parseInteger('--k-max', 1, 50))
    .option('--covariance <type>', `${covarianceTypes.join('|')}|auto`, 'auto')
    .option('--restarts <n>', 'EM restarts per fit (default 5)', parseInteger('--restarts', 1, 100))
    .option('--seed <n>', 'random seed (default 0); same seed, same run', parseInteger('--seed', 0, 2 ** 32 - 1))
    .option('--parent <id>', 'parent run (default: the latest run with an earlier as-of date)', parseInteger('--parent', 1))
    .option('--json', 'print one JSON object {runId, parentRunId, k, covariance, bic, customers, tooNew, borderline, atypical, segments, stability}')
    .action(async (options: RefreshCliOptions) => {
      const json = Boolean(options.json);
      setExitCode(
        await runCommand(io, json, async () => {
          if (!options.asOf) throw new InputError('refresh needs --as-of YYYY-MM-DD: the last day of the window.');
          if (options.mode !== 'refit' && options.mode !== 'rescore') throw new InputError(`--mode must be refit or rescore; got "${options.mode}".`);
          const k = options.k === 'auto' ? 'auto' : parseInteger('--k', 1, 50)(options.k);
          if (options.covariance !== 'auto' && !(covarianceTypes as readonly string[]).includes(options.covariance)) {
            throw new InputError(`--covariance must be one of ${covarianceTypes.join(', ')} or auto; got "${options.covariance}".`);
          }
          const db = openExistingDatabase(options.db, 'refresh');
          try {
            const showProgress = !json && process.stderr.isTTY;
            const summary = await runSegmentation(
              db,
              {
                asOf: options.asOf,
                windowMonths: options.windowMonths,
                mode: options.mode as RefreshMode,
                k,
                kMax: options.kMax,
                covariance: options.covariance as CovarianceType | 'auto',
                restarts: options.restarts,
                seed: options.seed,
                parentRunId: options.parent,
              },
              {
                onProgress: showProgress
                  ? (progress) => io.stderr(`\r${progress.message}${progress.fit ? ` (k=${progress.fit.k} ${progress.fit.covarianceType}, restart ${progress.fit.restart + 1})` : ''}\x1b[K`)
                  : undefined,
              },
            );
            if (showProgress) io.stderr('\n');
            return { result: summary, human: describe };
          } finally {
            db.close();
          }
        }),
      );
    });
};
