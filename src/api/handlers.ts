import { InputError } from '../errors.js';
import { writeFileAtomically } from '../export/atomic-file.js';
import { cautions } from '../export/cautions.js';
import { computedFeatureNames, featureDescriptions } from '../features/definitions.js';
import { dataRange } from '../features/compute.js';
import { importHistory, importReportPage, savedMapping } from '../ingest/import-history.js';
import { featuresSql, modelSql, readScoringModel } from '../warehouse/index.js';
import { previewFile } from '../ingest/preview.js';
import { toCoreMapping, toScreenMapping } from '../ingest/screen-mapping.js';
import { borderlinePage } from '../runs/read/borderline.js';
import { certaintySummary } from '../runs/read/certainty.js';
import { membershipsPage } from '../runs/read/memberships.js';
import { movementOf } from '../runs/read/movement.js';
import { reviewQueuePage } from '../runs/read/review-queue.js';
import { getRunDetail } from '../runs/read/run-detail.js';
import { countRuns, listRuns } from '../runs/read/runs-list.js';
import { featureData } from '../runs/feature-data.js';
import { featureDistribution, segmentSample } from '../runs/read/segment-sample.js';
import { segmentationOf } from '../runs/read/segmentation.js';
import { listSegments } from '../runs/read/segments.js';
import { sweepTable } from '../runs/read/sweep.js';
import { renameSegment } from '../runs/rename-segment.js';
import { acceptUnqueued, decideReview } from '../runs/review-decisions.js';
import { databaseCounts } from '../store/database-counts.js';
import { CURRENT_SCHEMA_VERSION } from '../store/database.js';
import { isoDateFromDay } from '../store/days.js';
import { toApiError, parseInput } from './api-errors.js';
import {
  apiSchemas,
  covarianceTypes,
  defaultReceiptFeatures,
  defaultTransform,
  startRunInput,
  type ApiMethod,
  type ApiOutput,
  type ApiParsedInput,
  type CallOutcome,
  type DatabaseInfo,
  type LongTaskMethod,
} from './contract.js';
import { appVersion } from './package-root.js';
import type { ApiSession } from './session.js';

export type Handler<M extends ApiMethod> = (session: ApiSession, input: ApiParsedInput<M>) => Promise<ApiOutput<M>> | ApiOutput<M>;
export type HandlerMap = { [M in ApiMethod]: Handler<M> };

/** The screens' field → column mapping and left-out columns, in the importer's column → field form. */
function coreMappingOf(input: { mapping?: Record<string, string>; ignoreColumns?: string[] }) {
  return input.mapping || input.ignoreColumns ? toCoreMapping(input.mapping ?? {}, input.ignoreColumns) : undefined;
}

function databaseInfo(session: ApiSession): DatabaseInfo {
  const db = session.db();
  const range = dataRange(db);
  return {
    path: session.requirePath(),
    schemaVersion: CURRENT_SCHEMA_VERSION,
    ...databaseCounts(db),
    imports: importHistory(db).length,
    runs: countRuns(db),
    firstDataDate: range ? isoDateFromDay(range.firstDay) : null,
    lastDataDate: range ? isoDateFromDay(range.lastDay) : null,
  };
}

/**
 * The one handler map: each takes validated input (see `callApi`), calls the core and returns the
 * contract's output. The CLI, Electron IPC and the browser host all go through it. Paths go
 * through the session's file policy (./file-policy.ts), one function per kind.
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
    session.open(session.files.databasePath(input.path));
    return databaseInfo(session);
  },
  databaseInfo: (session) => databaseInfo(session),
  listImports: (session) => importHistory(session.db()),
  savedMapping: (session, input) => savedMapping(session.db(), input.kind),
  modelOptions: (session) => {
    const db = session.db();
    const range = dataRange(db);
    const defaults = defaultReceiptFeatures(featureData(db));
    const features = computedFeatureNames.map((name) => ({
      name,
      label: featureDescriptions[name].label,
      unit: featureDescriptions[name].unit,
      meaning: featureDescriptions[name].meaning,
      inDefaultSet: defaults.includes(name),
      defaultTransform: defaultTransform(name, 'receipts'),
    }));
    const asOf = range ? isoDateFromDay(range.lastDay) : new Date().toISOString().slice(0, 10);
    return { features, covarianceTypes: [...covarianceTypes], defaults: startRunInput.parse({ asOf }) };
  },
  previewFile: async (session, input) => {
    const preview = await previewFile(session.db(), {
      path: session.files.inputFile(input.path),
      kind: input.kind,
      mapping: coreMappingOf(input),
      rows: input.rows,
      sheet: input.sheet,
      dateFormat: input.dateOrder,
      decimalComma: input.decimalSeparator === ',',
      encoding: input.encoding,
      plausibleDates: input.plausibleDates,
    });
    return { ...preview, mapping: toScreenMapping(preview.mapping) };
  },
  importReport: (session, input) => importReportPage(session.db(), input),
  listRuns: (session) => listRuns(session.db()),
  runSummary: (session, input) => getRunDetail(session.db(), input.runId),
  segments: (session, input) => listSegments(session.db(), input.runId),
  segmentation: (session, input) => segmentationOf(session.db(), input.runId),
  regroupSegments: (session, input) => session.startTask('regroupSegments', input),
  sweepTable: (session, input) => sweepTable(session.db(), input.runId),
  segmentSample: (session, input) => segmentSample(session.db(), input),
  featureDistribution: (session, input) => featureDistribution(session.db(), input),
  membershipsPage: (session, input) => membershipsPage(session.db(), input),
  certainty: (session, input) => certaintySummary(session.db(), input),
  borderline: (session, input) => borderlinePage(session.db(), input),
  reviewQueue: (session, input) => reviewQueuePage(session.db(), input),
  decideReview: (session, input) => smallWrite(session, 'The decision', () => decideReview(session.db(), input)),
  acceptUnqueued: (session, input) => smallWrite(session, 'The decisions', () => acceptUnqueued(session.db(), input)),
  renameSegment: (session, input) => smallWrite(session, 'The new name', () => renameSegment(session.db(), input)),
  movement: (session, input) => movementOf(session.db(), input.runId),
  importFile: (session, input) =>
    session.startTask('importFile', {
      ...input,
      path: session.files.inputFile(input.path),
      mapping: coreMappingOf(input),
      ignoreColumns: undefined,
    }),
  startRun: (session, input) => session.startTask('startRun', input),
  exportRun: (session, input) => session.startTask('exportRun', { ...input, out: session.files.exportTarget(input.out) }),
  loadDemo: (session, input) => session.startTask('loadDemo', { ...input, customers: input.customers ?? session.demoCustomers }),
  featuresSql: (_session, input) => {
    const query = featuresSql(input);
    return {
      sql: query.sql,
      dialect: query.dialect,
      asOf: input.asOf,
      windowMonths: input.windowMonths,
      windowStart: query.windowStart,
      tables: { receipts: input.receiptsTable, visits: input.visitsTable, customers: input.customersTable },
      columns: query.columns,
    };
  },
  modelSql: async (session, input) => {
    const query = modelSql(readScoringModel(session.db(), input.runId), { dialect: input.dialect, featuresTable: input.featuresTable });
    const out = input.out === undefined ? null : session.files.exportTarget(input.out);
    if (out !== null) await writeFileAtomically(out, async (output) => void output.end(query.sql));
    return { ...query, runId: input.runId, featuresTable: input.featuresTable, out };
  },
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
        `${what} could not be saved just now: ${running ? `the ${taskWords[running]} is writing to the database` : 'another program is writing to the database'}. ` +
          'Try again when it has finished.',
      );
    }
    throw error;
  }
}

const taskWords: Record<LongTaskMethod, string> = {
  importFile: 'import',
  startRun: 'segmentation run',
  regroupSegments: 'regrouping of segments',
  exportRun: 'export',
  loadDemo: 'demo load',
};

function isApiMethod(method: string): method is ApiMethod {
  return Object.prototype.hasOwnProperty.call(apiSchemas, method);
}

/**
 * Validates the raw input of one call with its zod schema and runs the handler. Unknown methods
 * and malformed input become InputErrors naming the method and every offending field in words
 * (./api-errors.ts), the same for every caller.
 */
export async function callApi(session: ApiSession, method: string, rawInput: unknown): Promise<unknown> {
  if (!isApiMethod(method)) {
    throw new InputError(`Unknown API method "${method}". Known methods: ${Object.keys(handlers).join(', ')}.`);
  }
  const input = parseInput(method, apiSchemas[method], rawInput === undefined || rawInput === null ? {} : rawInput);
  const handler = (handlers as unknown as Record<string, Handler<ApiMethod>>)[method];
  return handler(session, input as never);
}

/** `callApi` with the error folded into the transport-neutral outcome (IPC, HTTP). */
export async function callApiOutcome(session: ApiSession, method: string, rawInput: unknown): Promise<CallOutcome> {
  try {
    return { ok: true, value: await callApi(session, method, rawInput) };
  } catch (error) {
    return { ok: false, error: toApiError(error) };
  }
}
