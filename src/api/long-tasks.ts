import { mkdtempSync, rmSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { DEFAULT_CUSTOMERS, generateDemoChain } from '../../demo-data/generator/index.js';
import { exportRun } from '../export/export-run.js';
import { importFile } from '../ingest/import-file.js';
import { demoDatabaseSummary, loadDemoFiles } from '../ingest/load-demo.js';
import { runSegmentation } from '../runs/run.js';
import type { RunSettings as CoreRunSettings } from '../runs/types.js';
import { listImports } from '../store/imports-repo.js';
import { openDatabase, type Database } from '../store/database.js';
import { throwIfAborted } from '../errors.js';
import type { ApiParsedInput, ImportResult, LongTaskMethod, TaskResults } from './contract.js';
import type { LongTaskRequest } from './long-task-request.js';
import type { ProgressReporter } from './tasks.js';

export interface LongTaskContext {
  signal: AbortSignal;
  onProgress: ProgressReporter;
}

/** The contract's run settings in the runs core's terms. */
export function toCoreRunSettings(input: ApiParsedInput<'startRun'>): CoreRunSettings {
  const { features, ...rest } = input;
  return {
    ...rest,
    ...(features
      ? {
          features: features.map((spec) => spec.feature),
          transforms: Object.fromEntries(
            features.map(({ feature, ...transform }) => [feature, transform]),
          ),
        }
      : {}),
  };
}

/** Imports one file; `input.mapping` is already in the importer's column → field form (see handlers). */
async function importOne(db: Database, input: ApiParsedInput<'importFile'>, context: LongTaskContext): Promise<ImportResult> {
  const before = listImports(db).at(-1)?.importId ?? 0;
  const result = await importFile(db, {
    path: input.path,
    kind: input.kind,
    mapping: input.mapping,
    options: {
      dateFormat: input.dateOrder,
      decimalComma: input.decimalSeparator === ',',
      maxRejectedShare: input.rejectionThreshold,
      sheet: input.sheet,
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
  // Long tasks run one at a time, so a new import row after `before` is this one.
  const added = listImports(db).filter((record) => record.importId > before && record.kind === input.kind).at(-1);
  return { importId: result.alreadyImported ? null : (added?.importId ?? null), ...result };
}

/** Generates the invented demo chain into a scratch folder and loads it through the importer. */
async function loadDemo(db: Database, dbPath: string, input: ApiParsedInput<'loadDemo'>, context: LongTaskContext): Promise<TaskResults['loadDemo']> {
  const scratch = mkdtempSync(join(tmpdir(), 'spendmix-demo-'));
  try {
    const chain = await generateDemoChain({
      outDir: scratch,
      customers: input.customers ?? DEFAULT_CUSTOMERS,
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
    const { db: path, customers, receipts, visits } = demoDatabaseSummary(db, dbPath);
    return { db: path, customers, receipts, visits };
  } finally {
    rmSync(scratch, { recursive: true, force: true });
  }
}

/**
 * Runs one long task's core work on its own database connection: import, segmentation run,
 * export or demo. Called on a worker thread (task-worker.ts) by the app, and directly by tests.
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
      return runSegmentation(db, toCoreRunSettings(request.input), {
        signal: context.signal,
        onProgress: (progress) =>
          context.onProgress({ phase: progress.phase, done: progress.done, total: progress.total || null, message: progress.message }),
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
