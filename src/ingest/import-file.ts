import { basename, dirname, join, resolve } from 'node:path';
import type { Database } from 'better-sqlite3';
import type { ImportResult } from '../api/contract.js';
import { CancelledError, InputError, throwIfAborted } from '../errors.js';
import { asDatabaseInputError } from '../store/database.js';
import {
  customerWriter,
  featureWriter,
  knownStoreIds,
  receiptWriter,
  recordStoreIds,
  visitWriter,
  type BulkWriter,
} from '../store/bulk-writers.js';
import {
  findImportByHash,
  finishImport,
  IMPORT_KINDS,
  insertImport,
  saveMapping,
  savedMapping,
  type ImportKind,
} from '../store/imports-repo.js';
import { ENCODING_CHOICES, probeFile, type EncodingChoice, type FileProbe } from './file-probe.js';
import { parseInWorker } from './parallel-parse.js';
import { fileTotalsContext, strideOf, validateRecords, type ValidatedBatch, type ValidationContext } from './record-validator.js';
import { maxRowId, receiptAmountAfter, suspendSecondaryIndexes, useBulkLoadSettings, useRollbackJournalForLoad } from '../store/bulk-load.js';
import { ImportReport } from './import-report.js';
import { resolveMapping, type ColumnMapping, type ResolvedMapping } from './mapping.js';
import { openRecordSource, type RecordSource } from './record-source.js';
import { makeRowConverter, STORE_VALUE_INDEX } from './row-converters.js';
import { checkDateRange, DATE_FORMATS, type DateFormat, type DateRange } from './values.js';

export interface ImportOptions {
  /** How non-ISO dates are read; ISO dates are always accepted. Default 'iso' (others rejected). */
  dateFormat?: DateFormat;
  /** Amounts and numbers use a decimal comma. Default false. */
  decimalComma?: boolean;
  /** Above this share of rejected rows the whole file is refused. Default 0.05. */
  maxRejectedShare?: number;
  /** XLSX: sheet to read (default the first). */
  sheet?: string;
  /** CSV: force the delimiter instead of sniffing. */
  delimiter?: string;
  /** Folder for the import report (default: the database's folder). */
  reportDir?: string;
  /** Parse CSV in a worker thread (default: for files of 4 MiB and more, see useWorker). */
  parseInWorker?: boolean;
  /** CSV: how the text is encoded (default UTF-8; bytes that are not UTF-8 are refused, naming this choice). */
  encoding?: EncodingChoice;
  /** Dates outside this range are rejected as implausible (the API contract holds the default); absent = any date. */
  plausibleDates?: DateRange;
}

export type ImportPhase = 'checking' | 'reading' | 'indexing' | 'committing' | 'done';

/**
 * A load this large (estimated rows), and at least a quarter of the rows already there, drops the
 * table's non-unique indexes and rebuilds them once at the end (sorting beats random inserts).
 */
const BULK_LOAD_MIN_ROWS = 50_000;
const BULK_LOAD_MIN_SHARE = 0.25;

export interface ImportProgress {
  phase: ImportPhase;
  rows: number;
  bytes: number;
  totalBytes: number;
}

export interface ImportRequest {
  path: string;
  kind: ImportKind;
  /** Source column → field; wins over the saved mapping and automatic names. */
  mapping?: ColumnMapping;
  options?: ImportOptions;
  signal?: AbortSignal;
  onProgress?: (progress: ImportProgress) => void;
}

/** The result is the contract's (the `import --json` object plus the import's id). */
export type { ImportResult };

export const DEFAULT_MAX_REJECTED_SHARE = 0.05;

function validateRequest(
  request: ImportRequest,
): Required<Pick<ImportOptions, 'dateFormat' | 'decimalComma' | 'maxRejectedShare' | 'encoding'>> & Pick<ImportOptions, 'plausibleDates'> {
  if (!IMPORT_KINDS.includes(request.kind)) {
    throw new InputError(`Unknown import kind "${request.kind}"; expected one of ${IMPORT_KINDS.join(', ')}.`);
  }
  if (typeof request.path !== 'string' || request.path.trim() === '') throw new InputError('No file to import was given.');
  const options = request.options ?? {};
  const dateFormat = options.dateFormat ?? 'iso';
  if (!DATE_FORMATS.includes(dateFormat)) {
    throw new InputError(`Date format must be one of ${DATE_FORMATS.join(', ')}; got "${dateFormat}".`);
  }
  const maxRejectedShare = options.maxRejectedShare ?? DEFAULT_MAX_REJECTED_SHARE;
  if (!Number.isFinite(maxRejectedShare) || maxRejectedShare < 0 || maxRejectedShare > 1) {
    throw new InputError(`The maximum rejected share must be between 0 and 1; got ${maxRejectedShare}.`);
  }
  const encoding = options.encoding ?? 'utf-8';
  if (!ENCODING_CHOICES.includes(encoding)) throw new InputError(`The encoding must be one of ${ENCODING_CHOICES.join(', ')}; got "${encoding}".`);
  const plausibleDates = options.plausibleDates ? checkDateRange(options.plausibleDates) : undefined;
  return { dateFormat, decimalComma: options.decimalComma ?? false, maxRejectedShare, encoding, plausibleDates };
}

function reportPathFor(db: Database, request: ImportRequest): string {
  const databasePath = db.name && db.name !== ':memory:' ? resolve(db.name) : undefined;
  const folder = request.options?.reportDir ?? (databasePath ? dirname(databasePath) : dirname(resolve(request.path)));
  const stamp = new Date().toISOString().replace(/[-:]/g, '').replace(/\..*$/, '').replace('T', '-');
  const base = databasePath ? basename(databasePath) : 'spendmix';
  return join(folder, `${base}.import-${stamp}-${basename(request.path).replace(/[^\w.-]+/g, '_')}.report.csv`);
}

function writerFor(db: Database, kind: ImportKind, importId: number, resolved: ResolvedMapping): BulkWriter {
  switch (kind) {
    case 'receipts':
      return receiptWriter(db, importId, resolved.fieldIndex.has('items'));
    case 'visits':
      return visitWriter(db, importId);
    case 'customers':
      return customerWriter(db, importId);
    case 'features':
      return featureWriter(db, importId, resolved.featureColumns.map(([, name]) => name));
  }
}

/** Receipts or visits files above this size load with a rollback journal (see useRollbackJournalForLoad). */
const ROLLBACK_JOURNAL_MIN_BYTES = 4 * 1024 * 1024;

/**
 * CSV files this large are read and validated in a worker thread while this thread writes to the
 * database (the two overlap on two cores; rows cross as packed batches, see packed-batch.ts).
 * Below it, starting the worker costs more than it saves.
 */
const WORKER_MIN_BYTES = 4 * 1024 * 1024;

function useWorker(probe: FileProbe, request: ImportRequest): boolean {
  return probe.format === 'csv' && (request.options?.parseInWorker ?? probe.bytes >= WORKER_MIN_BYTES);
}

/** The single-thread path: validate each batch of the source as it is read. */
async function* validatedBatches(source: RecordSource, context: ValidationContext, bytesRead: () => number): AsyncGenerator<ValidatedBatch> {
  for await (const records of source.batches) yield validateRecords(records, context, bytesRead());
}

function isUniqueViolation(error: unknown): boolean {
  return (error as { code?: string }).code === 'SQLITE_CONSTRAINT_UNIQUE';
}

/**
 * Imports one file into the database as one transaction: all of its valid rows or nothing.
 * A file whose content was imported before (same kind, same SHA-256) is recognised and skipped.
 * Rows that fail validation go to the import report; above the rejection threshold the whole
 * file is refused. Cancelling through `signal` rolls everything back.
 *
 * The connection must not be used by anything else until the promise settles: the transaction
 * stays open across the awaits of the file reads.
 */
export async function importFile(db: Database, request: ImportRequest): Promise<ImportResult> {
  const settings = validateRequest(request);
  const { kind, signal, onProgress } = request;
  const file = request.path;
  let totalBytes = 0;
  const progress = (phase: ImportPhase, rows: number, bytes: number) => onProgress?.({ phase, rows, bytes, totalBytes });

  const probe = await probeFile(file, signal, (bytes) => progress('checking', 0, bytes), undefined, settings.encoding);
  totalBytes = probe.bytes;
  const earlier = findImportByHash(db, kind, probe.contentHash);
  const alreadyImported = (): ImportResult => ({
    importId: null,
    file,
    kind,
    rowsRead: 0,
    rowsImported: 0,
    rowsRejected: 0,
    duplicatesSkipped: 0,
    alreadyImported: true,
    amountTotal: kind === 'receipts' ? 0 : null,
    report: null,
  });
  if (earlier) {
    progress('done', 0, totalBytes);
    return alreadyImported();
  }

  let bytesRead = 0;
  const source = await openRecordSource(probe, {
    sheet: request.options?.sheet,
    delimiter: request.options?.delimiter,
    decimalComma: settings.decimalComma,
    signal,
    onBytes: (bytes) => {
      bytesRead = bytes;
    },
  });
  try {
    const resolved = resolveMapping({
      kind,
      header: source.header,
      explicit: request.mapping,
      saved: savedMapping(db, kind),
      context: source.context(),
    });
    const convert = makeRowConverter(kind, resolved, source.header, settings);
    const width = source.header.length;
    const report = new ImportReport(reportPathFor(db, request));

    const largeLoad = (kind === 'receipts' || kind === 'visits') && probe.bytes >= ROLLBACK_JOURNAL_MIN_BYTES;
    const restoreJournal = largeLoad ? useRollbackJournalForLoad(db) : () => {};
    try {
      db.exec('BEGIN IMMEDIATE');
    } catch (error) {
      restoreJournal();
      report.discard();
      throw asDatabaseInputError(db.name, error);
    }
    const restoreSettings = useBulkLoadSettings(db);
    try {
      let importId: number;
      try {
        importId = insertImport(db, {
          fileName: basename(file),
          kind,
          contentHash: probe.contentHash,
          mapping: resolved.mapping,
          rowsRead: 0,
          rowsImported: 0,
          rowsRejected: 0,
          duplicatesSkipped: 0,
          amountTotalCents: null,
          reportPath: null,
          importedAt: new Date().toISOString(),
        });
      } catch (error) {
        // Another process imported the same file since the check above.
        if (isUniqueViolation(error)) {
          db.exec('ROLLBACK');
          return alreadyImported();
        }
        throw error;
      }
      const writer = writerFor(db, kind, importId, resolved);
      const storeIndex = STORE_VALUE_INDEX[kind];
      const knownStores = storeIndex >= 0 ? knownStoreIds(db) : new Set<string>();
      const newStores = new Set<string>();
      const table = kind === 'receipts' || kind === 'visits' ? kind : undefined;
      const rowIdBefore = table ? maxRowId(db, table) : 0;
      let restoreIndexes: (() => void) | undefined;
      let firstBatch = true;
      let rowsRead = 0;
      let addedAmountCents = 0; // of every accepted row, duplicates included
      const stride = strideOf(kind, resolved.featureColumns.length);
      const batches =
        useWorker(probe, request)
          ? parseInWorker(
              {
                probe,
                delimiter: source.delimiter ?? ',',
                kind,
                header: source.header,
                fieldIndex: [...resolved.fieldIndex],
                featureColumns: resolved.featureColumns,
                settings,
                stride,
                aheadLimit: 2,
              },
              signal,
            )
          : validatedBatches(
              source,
              {
                convert,
                width,
                stride,
                padShortRows: source.padShortRows,
                delimiter: source.delimiter,
                ...fileTotalsContext(kind),
              },
              () => bytesRead,
            );
      for await (const batch of batches) {
        throwIfAborted(signal);
        if (firstBatch && table && batch.bytes > 0) {
          const estimatedRows = (batch.rowsRead * probe.bytes) / batch.bytes;
          if (estimatedRows >= BULK_LOAD_MIN_ROWS && estimatedRows >= BULK_LOAD_MIN_SHARE * rowIdBefore) {
            restoreIndexes = suspendSecondaryIndexes(db, table);
          }
        }
        firstBatch = false;
        rowsRead += batch.rowsRead;
        for (const rejection of batch.rejected) report.add(rejection.line, rejection);
        addedAmountCents += batch.amountCents;
        for (const storeId of batch.newStoreIds) if (!knownStores.has(storeId)) newStores.add(storeId);
        writer.addRows(batch.values, stride);
        progress('reading', rowsRead, batch.bytes);
      }
      throwIfAborted(signal);
      if (rowsRead === 0) throw new InputError(`${file} has a header but no data rows.`);
      writer.flush();
      const rowsRejected = report.rejectedRows;
      if (rowsRejected / rowsRead > settings.maxRejectedShare) {
        const reportPath = report.finish();
        db.exec('ROLLBACK');
        throw new InputError(
          `${file}: ${rowsRejected} of ${rowsRead} rows (${((100 * rowsRejected) / rowsRead).toFixed(1)}%) failed validation, ` +
            `above the ${(100 * settings.maxRejectedShare).toFixed(1)}% limit, so nothing was imported. ` +
            `Most common: ${report.topReasons()}. Rows and reasons: ${reportPath}`,
          { rowsRead, rowsRejected, report: reportPath },
        );
      }
      if (restoreIndexes) {
        progress('indexing', rowsRead, bytesRead);
        restoreIndexes();
        throwIfAborted(signal);
      }
      progress('committing', rowsRead, bytesRead);
      recordStoreIds(db, newStores);
      // With no duplicates the rows added are the rows written; otherwise sum what was written.
      const amountCents =
        kind !== 'receipts' ? null : writer.rowsWritten === writer.rowsAdded ? addedAmountCents : receiptAmountAfter(db, rowIdBefore);
      const reportPath = report.finish();
      const result: ImportResult = {
        importId,
        file,
        kind,
        rowsRead,
        rowsImported: writer.rowsWritten,
        rowsRejected,
        duplicatesSkipped: writer.rowsAdded - writer.rowsWritten,
        alreadyImported: false,
        amountTotal: amountCents === null ? null : amountCents / 100,
        report: reportPath,
      };
      finishImport(db, importId, {
        rowsRead,
        rowsImported: result.rowsImported,
        rowsRejected,
        duplicatesSkipped: result.duplicatesSkipped,
        amountTotalCents: amountCents,
        reportPath,
      });
      saveMapping(db, kind, resolved.mapping);
      db.exec('COMMIT');
      progress('done', rowsRead, totalBytes);
      return result;
    } catch (error) {
      if (db.inTransaction) db.exec('ROLLBACK');
      if (!(error instanceof InputError && error.details?.report)) report.discard();
      if (error instanceof CancelledError || error instanceof InputError) throw error;
      throw asDatabaseInputError(db.name, error);
    } finally {
      restoreSettings();
      restoreJournal();
    }
  } finally {
    await source.close();
  }
}
