import { mkdtempSync, rmSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { generateDemoChain } from '../demo/index.js';
import { exportRun } from '../export/export-run.js';
import { importFile } from '../ingest/import-file.js';
import { demoDatabaseSummary, loadDemoFiles } from '../ingest/load-demo.js';
import { featureData } from '../runs/feature-data.js';
import { runSegmentation } from '../runs/run.js';
import type { RunProgress } from '../runs/types.js';
import { openDatabase, type Database } from '../store/database.js';
import { throwIfAborted } from '../errors.js';
import {
  DEFAULT_DEMO_CUSTOMERS,
  delimiterNames,
  explicitRunSettings,
  type ApiParsedInput,
  type ExplicitRunSettings,
  type LongTaskMethod,
  type RunSettings,
  type TaskResults,
} from './contract.js';
import type { LongTaskRequest } from './long-task-request.js';
import type { ProgressReporter } from './tasks.js';

/**
 * The long tasks' work: import, segmentation run, export and demo load, each on its own database
 * connection. The app runs them on a worker thread (task-worker.ts); the CLI runs the same
 * function on its own thread (src/cli/session.ts), so both do exactly the same work.
 */

export interface LongTaskContext {
  signal: AbortSignal;
  onProgress: ProgressReporter;
}

/** A run's settings with the data-dependent defaults made explicit for this database. */
export function runSettingsFor(db: Database, settings: RunSettings): ExplicitRunSettings {
  return explicitRunSettings(settings, featureData(db));
}

/** Imports one file; `input.mapping` is already in the importer's column → field form (see handlers). */
function importOne(db: Database, input: ApiParsedInput<'importFile'>, context: LongTaskContext): Promise<TaskResults['importFile']> {
  return importFile(db, {
    path: input.path,
    kind: input.kind,
    mapping: input.mapping,
    options: {
      dateFormat: input.dateOrder,
      decimalComma: input.decimalSeparator === ',',
      maxRejectedShare: input.rejectionThreshold,
      sheet: input.sheet,
      delimiter: input.delimiter === undefined ? undefined : (delimiterNames[input.delimiter as keyof typeof delimiterNames] ?? input.delimiter),
      encoding: input.encoding,
      plausibleDates: input.plausibleDates,
    },
    signal: context.signal,
    onProgress: (progress) =>
      context.onProgress({
        phase: progress.phase,
        done: progress.bytes,
        total: progress.totalBytes || null,
        message: `${progress.rows.toLocaleString('en-GB')} rows read`,
      }),
  });
}

/** A run's progress in words, the fit's own report included (k, structure, restart). */
function runProgressMessage(progress: RunProgress): string {
  const { fit } = progress;
  return fit ? `${progress.message} (k=${fit.k} ${fit.covarianceType}, restart ${fit.restart + 1})` : progress.message;
}

/** Generates the invented demo chain into a scratch folder and loads it through the importer. */
async function loadDemo(db: Database, dbPath: string, input: ApiParsedInput<'loadDemo'>, context: LongTaskContext): Promise<TaskResults['loadDemo']> {
  const scratch = mkdtempSync(join(tmpdir(), 'spendmix-demo-'));
  try {
    const chain = await generateDemoChain({
      outDir: scratch,
      customers: input.customers ?? DEFAULT_DEMO_CUSTOMERS,
      seed: input.seed,
      signal: context.signal,
      onProgress: (progress) =>
        context.onProgress({
          phase: 'generating',
          done: progress.monthsDone,
          total: progress.months,
          message: `Generating ${progress.month} (${progress.receipts.toLocaleString('en-GB')} receipts so far)`,
        }),
    });
    throwIfAborted(context.signal);
    await loadDemoFiles(
      db,
      chain.files,
      (kind, progress) =>
        context.onProgress({
          phase: `importing ${kind}: ${progress.phase}`,
          done: progress.bytes,
          total: progress.totalBytes || null,
          message: `${progress.rows.toLocaleString('en-GB')} ${kind} rows read`,
        }),
      context.signal,
    );
    return demoDatabaseSummary(db, dbPath);
  } finally {
    rmSync(scratch, { recursive: true, force: true });
  }
}

/**
 * Runs one long task's core work on its own database connection: import, segmentation run,
 * export or demo. Called on a worker thread (task-worker.ts) by the app, on the calling thread
 * by the CLI, and directly by tests.
 */
export async function runLongTask<M extends LongTaskMethod>(request: LongTaskRequest<M>, context: LongTaskContext): Promise<TaskResults[M]> {
  const db = openDatabase(request.dbPath);
  try {
    return (await runOn(db, request as LongTaskRequest, context)) as TaskResults[M];
  } finally {
    db.close();
  }
}

async function runOn(db: Database, request: LongTaskRequest, context: LongTaskContext): Promise<TaskResults[LongTaskMethod]> {
  switch (request.method) {
    case 'importFile':
      return importOne(db, request.input, context);
    case 'startRun':
      return runSegmentation(db, runSettingsFor(db, request.input), {
        signal: context.signal,
        onProgress: (progress) =>
          context.onProgress({ phase: progress.phase, done: progress.done, total: progress.total || null, message: runProgressMessage(progress) }),
      });
    case 'exportRun': {
      const { runId, ...options } = request.input;
      return exportRun(db, {
        run: runId,
        ...options,
        signal: context.signal,
        onProgress: (progress) =>
          context.onProgress({ phase: progress.phase, done: progress.done, total: progress.total || null, message: progress.message }),
      });
    }
    case 'loadDemo':
      return loadDemo(db, request.dbPath, request.input, context);
  }
}
