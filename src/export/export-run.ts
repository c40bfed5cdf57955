/**
 * The one export function the CLI and the app's API call (DESIGN.md §8, §10): a stored run to
 * a labelled workbook or a campaign CSV, with the campaign filter, consent suppression, progress,
 * cancel, and the file appearing only once it is complete.
 */
import type { Database } from 'better-sqlite3';
import type { ExportFormat, ExportResult } from '../api/contract.js';
import { extname, resolve } from 'node:path';
import { InputError, throwIfAborted } from '../errors.js';
import { resolveRunId } from '../runs/read/stored-run.js';
import { writeFileAtomically, type FileOperations } from './atomic-file.js';
import { csvDialects, csvFormat, writeCsvList, type CsvDialect } from './csv-writer.js';
import { planExport, type ExportProgress } from './passes.js';
import { runExportSource } from './run-source.js';
import { resolveCampaignFilter, suppressedCount } from './selection.js';
import type { ExportSource } from './source.js';
import { writeWorkbook } from './xlsx-workbook.js';

export type { ExportFormat, ExportResult };
export const exportFormats: readonly ExportFormat[] = ['xlsx', 'csv'];

export interface ExportOptions {
  out: string;
  /** Default: from the file extension (.csv → csv), else xlsx. */
  format?: ExportFormat;
  /** Final segment names to list; empty or absent = every segment. */
  segments?: readonly string[] | null;
  minConfidence?: number;
  /** Default true: customers with a keep or move decision are listed. */
  includeReviewed?: boolean;
  /** CSV: comma-separated with a decimal point (default), or semicolon-separated with a decimal comma. */
  csvDialect?: CsvDialect;
  /** CSV: text beginning like a formula is written as it is, without the apostrophe (for lists another system reads by id). */
  csvRawIds?: boolean;
  signal?: AbortSignal;
  onProgress?: (progress: ExportProgress) => void;
  /** Rows per customer sheet, header included (default Excel's 1,048,576). */
  rowsPerSheet?: number;
  /** File operations (tests play a file held open elsewhere). */
  files?: FileOperations;
}

export interface ExportRunOptions extends ExportOptions {
  run: number | 'latest';
}

/** The format to write, checked against the file name so a list is never saved under the wrong extension. */
export function resolveFormat(out: string, format: ExportFormat | undefined): ExportFormat {
  const extension = extname(out).toLowerCase();
  if (format !== undefined && !exportFormats.includes(format)) {
    throw new InputError(`The export format must be xlsx or csv; got "${String(format)}".`);
  }
  const chosen = format ?? (extension === '.csv' ? 'csv' : 'xlsx');
  if (extension !== `.${chosen}`) {
    throw new InputError(`The output file for a ${chosen.toUpperCase()} export must end in .${chosen}; got "${out}".`);
  }
  return chosen;
}

/** Exports any source (a stored run, or an in-memory one in tests and benchmarks). */
export async function exportSource(source: ExportSource, options: ExportOptions): Promise<ExportResult> {
  if (typeof options.out !== 'string' || options.out.trim() === '') throw new InputError('Give the output file (--out FILE.xlsx or FILE.csv).');
  const out = resolve(options.out);
  const format = resolveFormat(out, options.format);
  const filter = resolveCampaignFilter(
    { segments: options.segments, minConfidence: options.minConfidence, includeReviewed: options.includeReviewed },
    source.segments.map((segment) => segment.name),
  );
  if (options.csvDialect !== undefined && !csvDialects.includes(options.csvDialect)) {
    throw new InputError(`The CSV dialect must be ${csvDialects.join(' or ')}; got "${String(options.csvDialect)}".`);
  }
  const csv = csvFormat(options.csvDialect, options.csvRawIds ?? false);
  throwIfAborted(options.signal);
  const written = await writeFileAtomically(
    out,
    async (output, signal) => {
      const passOptions = { signal, onProgress: options.onProgress };
      const plan = await planExport(source, filter, passOptions);
      if (format === 'csv') {
        await writeCsvList({ source, filter, plan, output, format: csv, ...passOptions });
        return { names: [] as string[], plan };
      }
      const names = await writeWorkbook({ source, filter, plan, output, rowsPerSheet: options.rowsPerSheet, ...passOptions });
      return { names, plan };
    },
    { signal: options.signal, files: options.files },
  );
  return { out, sheets: written.names, customersExported: written.plan.tally.listed, suppressedNoConsent: suppressedCount(written.plan.tally) };
}

/** Exports a stored run ('latest' = the newest); unknown runs are an InputError naming the known ones. */
export async function exportRun(db: Database, options: ExportRunOptions): Promise<ExportResult> {
  const runId = resolveRunId(db, options.run);
  return exportSource(runExportSource(db, runId), options);
}
