import { existsSync, statSync } from 'node:fs';
import { dirname, resolve } from 'node:path';
import { InputError } from '../errors.js';
import { computedFeatureNames, featureDescriptions } from '../features/definitions.js';
import { dataRange } from '../features/compute.js';
import { isoDateFromDay } from '../store/days.js';
import { databaseCounts } from './database-counts.js';
import { listImports, savedMapping } from '../store/imports-repo.js';
import { CURRENT_SCHEMA_VERSION } from '../store/database.js';
import { cautions } from '../export/cautions.js';
import {
  decideReview,
  getBorderline,
  getMemberships,
  getReviewQueue,
  getRunSummary,
  getSweepTable,
  listRuns,
  renameSegment,
} from '../runs/repository.js';
import { toCoreMapping, toScreenMapping } from './mapping-direction.js';
import { importReportPage } from './import-report-page.js';
import { previewFile } from '../ingest/preview.js';
import {
  certaintyView,
  featureDistributionView,
  movementView,
  reviewItemView,
  runDetailView,
  segmentProfileView,
  segmentSampleView,
  segmentsView,
} from './run-views.js';
import { inputErrorFromZod, toApiError } from './api-errors.js';
import {
  apiSchemas,
  covarianceTypes,
  startRunInput,
  type ApiMethod,
  type ApiOutput,
  type ApiParsedInput,
  type CallOutcome,
  type DatabaseInfo,
  type FeatureOption,
  type LongTaskMethod,
} from './contract.js';
import { appVersion } from './package-root.js';
import type { ApiSession } from './session.js';

export type Handler<M extends ApiMethod> = (session: ApiSession, input: ApiParsedInput<M>) => Promise<ApiOutput<M>> | ApiOutput<M>;
export type HandlerMap = { [M in ApiMethod]: Handler<M> };

/** Features the model uses when the analyst picks none (DESIGN.md §4). */
const defaultModelFeatures = new Set(['spend_per_month', 'visits_per_month', 'average_basket']);

function databaseInfo(session: ApiSession): DatabaseInfo {
  const db = session.db();
  const counts = databaseCounts(db);
  const range = dataRange(db);
  return {
    path: session.requirePath(),
    schemaVersion: CURRENT_SCHEMA_VERSION,
    customers: counts.customers,
    receipts: counts.receipts,
    visits: counts.visits,
    imports: listImports(db).length,
    runs: listRuns(db).length,
    firstDataDate: range ? isoDateFromDay(range.firstDay) : null,
    lastDataDate: range ? isoDateFromDay(range.lastDay) : null,
  };
}

/** A page of the runs core in the contract's form. */
function pageOf<T>(runId: number, page: { total: number; offset: number; items: T[] }) {
  return { runId, total: page.total, offset: page.offset, rows: page.items };
}

/** An input file the user named: it must exist and be a file; the message says which. */
function requireReadableFile(path: string): string {
  const absolute = resolve(path);
  if (!existsSync(absolute)) throw new InputError(`File ${absolute} does not exist.`);
  if (!statSync(absolute).isFile()) throw new InputError(`${absolute} is a folder, not a file.`);
  return absolute;
}

/** An output path: its folder must exist (the exporter reports everything else). */
function requireWritableTarget(path: string): string {
  const absolute = resolve(path);
  if (!existsSync(dirname(absolute))) throw new InputError(`Folder ${dirname(absolute)} does not exist; choose an existing folder.`);
  if (existsSync(absolute) && statSync(absolute).isDirectory()) throw new InputError(`${absolute} is a folder; give a file name.`);
  return absolute;
}

/**
 * The one handler map: each takes validated input (see `callApi`), calls the core and returns the
 * contract's output. The CLI, Electron IPC and the browser host all go through it.
 */
export const handlers = {
  appInfo: (session) => ({
    version: appVersion(),
    shell: session.shell,
    databasePath: session.dbPath,
    recentDatabases: session.recentDatabases,
    cautions: [...cautions],
  }),
  openDatabase: (session, input) => {
    session.open(input.path);
    return databaseInfo(session);
  },
  databaseInfo: (session) => databaseInfo(session),
  listImports: (session) =>
    listImports(session.db()).map((record) => ({
      importId: record.importId,
      fileName: record.fileName,
      kind: record.kind,
      rowsRead: record.rowsRead,
      rowsImported: record.rowsImported,
      rowsRejected: record.rowsRejected,
      duplicatesSkipped: record.duplicatesSkipped,
      amountTotal: record.amountTotalCents === null ? null : record.amountTotalCents / 100,
      reportPath: record.reportPath,
      importedAt: record.importedAt,
      mapping: toScreenMapping(record.mapping),
    })),
  savedMapping: (session, input) => {
    const saved = savedMapping(session.db(), input.kind);
    return { kind: input.kind, mapping: saved ? toScreenMapping(saved) : null };
  },
  modelOptions: (session) => {
    const range = dataRange(session.db());
    const features: FeatureOption[] = computedFeatureNames.map((name) => {
      const description = featureDescriptions[name];
      const inDefaultSet = defaultModelFeatures.has(name);
      return {
        name,
        label: description.label,
        unit: description.unit,
        meaning: description.meaning,
        inDefaultSet,
        defaultTransform: {
          feature: name,
          // log1p suits the skewed, positive money and rate features (common practice).
          log1p: inDefaultSet,
          clipLowerPercentile: null,
          clipUpperPercentile: null,
          zScore: true,
        },
      };
    });
    const asOf = range ? isoDateFromDay(range.lastDay) : new Date().toISOString().slice(0, 10);
    return { features, covarianceTypes: [...covarianceTypes], defaults: startRunInput.parse({ asOf }) };
  },
  previewFile: async (session, input) => {
    const preview = await previewFile(session.db(), {
      path: requireReadableFile(input.path),
      kind: input.kind,
      mapping: input.mapping ? toCoreMapping(input.mapping) : undefined,
      rows: input.rows,
      sheet: input.sheet,
      dateFormat: input.dateOrder,
      decimalComma: input.decimalSeparator === ',',
      encoding: input.encoding,
      plausibleDates: input.plausibleDates,
    });
    return { ...preview, mapping: toScreenMapping(preview.mapping) };
  },
  importReport: (session, input) => {
    const record = listImports(session.db()).find((entry) => entry.importId === input.importId);
    if (!record) throw new InputError(`There is no import ${input.importId} in this database.`);
    return importReportPage(record.reportPath, input);
  },
  listRuns: (session) =>
    listRuns(session.db()).map(({ runId, parentRunId, asOf, mode, k, covariance, customers, createdAt }) => ({
      runId,
      parentRunId,
      asOf,
      mode,
      k,
      covariance,
      customers,
      createdAt,
    })),
  runSummary: (session, input) => {
    getRunSummary(session.db(), input.runId);
    return runDetailView(session.db(), input.runId);
  },
  segments: (session, input) => segmentsView(session.db(), input.runId),
  sweepTable: (session, input) => {
    const chosen = getRunSummary(session.db(), input.runId);
    return getSweepTable(session.db(), input.runId).map((row) => ({
      k: row.k,
      covariance: row.covarianceType,
      logLikelihood: row.logLikelihood,
      bic: row.bic,
      aic: row.aic,
      icl: row.icl,
      parameterCount: row.parameterCount,
      converged: row.converged,
      iterations: row.iterations,
      warnings: row.warnings,
      chosen: row.k === chosen.k && row.covarianceType === chosen.covariance,
    }));
  },
  segmentSample: (session, input) => segmentSampleView(session.db(), input),
  featureDistribution: (session, input) => featureDistributionView(session.db(), input),
  membershipsPage: (session, { runId, offset, limit, sortBy, descending, segment, flag }) =>
    pageOf(runId, getMemberships(session.db(), runId, { offset, limit, sort: sortBy, descending, segment, flag })),
  certainty: (session, input) => certaintyView(session.db(), input),
  borderline: (session, { runId, offset, limit, borderlineConfidence, borderlineMargin }) =>
    pageOf(runId, getBorderline(session.db(), runId, { offset, limit, confidenceBelow: borderlineConfidence, marginBelow: borderlineMargin })),
  reviewQueue: (session, input) => {
    const db = session.db();
    const page = getReviewQueue(db, input.runId, { offset: input.offset, limit: input.limit, status: input.status });
    const done = input.status === 'done' ? page.total : getReviewQueue(db, input.runId, { offset: 0, limit: 1, status: 'done' }).total;
    return { ...pageOf(input.runId, page), done };
  },
  decideReview: (session, input) => {
    const db = session.db();
    smallWrite(session, 'The decision', () => decideReview(db, input));
    return reviewItemView(db, input.runId, input.customerId);
  },
  renameSegment: (session, input) => {
    smallWrite(session, 'The new name', () => renameSegment(session.db(), input.runId, input.segment, input.name));
    return segmentProfileView(session.db(), input.runId, input.segment);
  },
  movement: (session, input) => movementView(session.db(), input.runId),
  importFile: (session, input) =>
    session.startTask('importFile', {
      ...input,
      path: requireReadableFile(input.path),
      mapping: input.mapping ? toCoreMapping(input.mapping) : undefined,
    }),
  startRun: (session, input) => session.startTask('startRun', input),
  exportRun: (session, input) => session.startTask('exportRun', { ...input, out: requireWritableTarget(input.out) }),
  loadDemo: (session, input) => session.startTask('loadDemo', { ...input, customers: input.customers ?? session.demoCustomers }),
  cancelTask: (session, input) => session.tasks.cancel(input.taskId),
  taskStatus: (session, input) => session.tasks.status(input.taskId),
} satisfies HandlerMap;

/**
 * Runs a small write (a review decision, a rename) on the session's connection. While a long
 * task holds the database's write lock (an import is one transaction) SQLite answers busy after
 * its timeout; say what is going on instead of a bare lock error.
 */
function smallWrite<T>(session: ApiSession, what: string, write: () => T): T {
  try {
    return write();
  } catch (error) {
    const code = (error as { code?: string }).code ?? '';
    if (code.startsWith('SQLITE_BUSY') || code.startsWith('SQLITE_LOCKED')) {
      const running = session.tasks.running();
      throw new InputError(
        `${what} could not be saved just now: ${running ? `the ${describeTask(running)} is writing to the database` : 'another program is writing to the database'}. ` +
          'Try again when it has finished.',
      );
    }
    throw error;
  }
}

const taskWords: Record<LongTaskMethod, string> = { importFile: 'import', startRun: 'segmentation run', exportRun: 'export', loadDemo: 'demo load' };
function describeTask(method: LongTaskMethod): string {
  return taskWords[method];
}

function isApiMethod(method: string): method is ApiMethod {
  return Object.prototype.hasOwnProperty.call(apiSchemas, method);
}

/**
 * Validates the raw input of one call with its zod schema and runs the handler. Unknown methods
 * and malformed input become InputErrors naming the method and every offending field.
 */
export async function callApi(session: ApiSession, method: string, rawInput: unknown): Promise<unknown> {
  if (!isApiMethod(method)) {
    throw new InputError(`Unknown API method "${method}". Known methods: ${Object.keys(handlers).join(', ')}.`);
  }
  const parsed = apiSchemas[method].safeParse(rawInput === undefined || rawInput === null ? {} : rawInput);
  if (!parsed.success) throw inputErrorFromZod(method, parsed.error);
  const handler = (handlers as unknown as Record<string, Handler<ApiMethod>>)[method];
  return handler(session, parsed.data as never);
}

/** `callApi` with the error folded into the transport-neutral outcome (IPC, HTTP). */
export async function callApiOutcome(session: ApiSession, method: string, rawInput: unknown): Promise<CallOutcome> {
  try {
    return { ok: true, value: await callApi(session, method, rawInput) };
  } catch (error) {
    return { ok: false, error: toApiError(error) };
  }
}
