import { z } from 'zod';
import { isoDate, named, nonEmpty, pageLimit, pageOffset, probability } from './fields.js';

/** The Sources screen and `import`: preview, import, history, saved mappings, rejection report. */

export const importKinds = ['receipts', 'visits', 'customers', 'features'] as const;
export type ImportKind = (typeof importKinds)[number];

/**
 * A column mapping as the screens hold it: for each field, the file's column that supplies it
 * (field → column; one choice per field). The handlers turn it into the importer's column → field
 * form (`--map col=field`) and back.
 */
const columnMapping = z.record(z.string(), z.string());
export type ColumnMapping = Record<string, string>;

/** CSV delimiters by name (or the character itself). */
export const delimiterNames = { comma: ',', semicolon: ';', tab: '\t', pipe: '|' } as const;
const delimiterChoices = [...Object.keys(delimiterNames), ...Object.values(delimiterNames)] as [string, ...string[]];

/**
 * Dates an import accepts unless told otherwise: from 1990-01-01 (before any loyalty-card history
 * an analyst loads; our choice) to a year after the day of the import (a till clock set wrong by
 * months still imports; a year like 9999 does not). Dates outside are rejected rows in the report.
 */
export const PLAUSIBLE_DATES_FROM = '1990-01-01';
export const PLAUSIBLE_DAYS_AHEAD = 366;
export function defaultPlausibleDates(today: Date = new Date()): { from: string; to: string } {
  return { from: PLAUSIBLE_DATES_FROM, to: new Date(today.getTime() + PLAUSIBLE_DAYS_AHEAD * 86_400_000).toISOString().slice(0, 10) };
}

/** Text encodings a CSV may be read in; a file that is not UTF-8 is refused, naming the other choice. */
export const importEncodings = ['utf-8', 'windows-1252'] as const;
export type ImportEncoding = (typeof importEncodings)[number];

const dateRange = z.strictObject({ from: isoDate, to: isoDate });
/** A date range as an object, or written FROM..TO (as the command line gives it). */
const plausibleDateRange = z
  .union([
    dateRange,
    z
      .string()
      .regex(/^\d{4}-\d{2}-\d{2}\.\.\d{4}-\d{2}-\d{2}$/, 'must be two dates written FROM..TO (YYYY-MM-DD..YYYY-MM-DD)')
      .transform((text) => {
        const [from, to] = text.split('..');
        return { from, to };
      })
      .pipe(dateRange),
  ])
  .refine((range) => range.from <= range.to, 'must not start after it ends');

/** How a file is read: sheet, dates, decimals, text encoding, plausible dates. */
export const readSettings = {
  sheet: named(z.string().min(1).optional(), 'the sheet of an XLSX workbook to read (absent: the first)', '--sheet <name>'),
  dateOrder: named(
    z.enum(['iso', 'day-first', 'month-first']).default('iso'),
    'how dates that are not ISO are read (ISO dates are always accepted)',
    '--date-format',
  ),
  decimalSeparator: named(z.enum(['.', ',']).default('.'), 'the decimal separator of amounts', '--decimal-comma'),
  encoding: named(
    z.enum(importEncodings).default('utf-8'),
    'the text encoding of a CSV file (a UTF-16 byte-order mark is honoured; a file that is not UTF-8 is refused, naming this setting)',
    '--encoding',
  ),
  plausibleDates: named(
    plausibleDateRange.default(() => defaultPlausibleDates()),
    'dates a row may carry; rows dated outside are rejected and listed in the report (default 1990-01-01..a year after today)',
    '--plausible-dates <FROM..TO>',
  ),
};

/** Where an import's columns come from, beyond the mapping. */
const mappingSettings = {
  mapping: named(columnMapping.optional(), 'the column chosen for each field (absent: the saved mapping, then the columns named as the fields)', '--map'),
  ignoreColumns: named(z.array(nonEmpty).optional(), 'columns to leave out (e.g. extra columns of a features file)', '--map COLUMN=ignore'),
};

export const previewFileInput = z.strictObject({
  path: named(nonEmpty, 'the file to preview'),
  kind: named(z.enum(importKinds), 'what the file holds'),
  ...mappingSettings,
  rows: named(z.number().int().min(1).max(200).default(20), 'rows to preview'),
  ...readSettings,
});

export interface FieldInfo {
  field: string;
  required: boolean;
  description: string;
}

export interface FilePreview {
  path: string;
  kind: ImportKind;
  /** Column names as found in the file. */
  columns: string[];
  /** Sheets of an XLSX workbook (empty for CSV). */
  sheets: string[];
  delimiter: string | null;
  encoding: string;
  /** The fields this kind knows, and which are required. */
  fields: FieldInfo[];
  /** The mapping the preview used (given, saved, or automatic by name). */
  mapping: ColumnMapping;
  mappingSource: 'given' | 'saved' | 'automatic';
  /** Required fields the mapping leaves without a column. */
  missingFields: string[];
  /** The first rows as they would be read: raw cells by column, then the parsed value or the reason it fails. */
  rows: {
    line: number;
    cells: Record<string, string>;
    parsed: Record<string, string | number | null> | null;
    problem: string | null;
  }[];
}

export const importFileInput = z.strictObject({
  path: named(nonEmpty, 'the file to import', '--receipts, --visits, --customers or --features'),
  kind: named(z.enum(importKinds), 'what the file holds'),
  ...mappingSettings,
  /** Share of rejected rows above which the whole file is refused (DESIGN.md §3: 5%). */
  rejectionThreshold: named(probability.default(0.05), 'share of rejected rows above which the whole file is refused', '--max-rejected-share'),
  ...readSettings,
  delimiter: named(z.enum(delimiterChoices).optional(), 'the CSV delimiter: comma, semicolon, tab or pipe (absent: detected)', '--delimiter <comma|semicolon|tab|pipe>'),
});

export type ImportFileInput = z.input<typeof importFileInput>;

/** The `import --json` object of DESIGN.md §10, plus the import's id (null when nothing was imported). */
export interface ImportResult {
  importId: number | null;
  file: string;
  kind: ImportKind;
  rowsRead: number;
  rowsImported: number;
  rowsRejected: number;
  duplicatesSkipped: number;
  alreadyImported: boolean;
  /** Sum of imported receipt amounts in EUR; null for other kinds. */
  amountTotal: number | null;
  /** Path of the rejection report (CSV next to the database), null when nothing was rejected. */
  report: string | null;
}

export const listImportsInput = z.strictObject({});
export interface ImportRecord {
  importId: number;
  fileName: string;
  kind: ImportKind;
  rowsRead: number;
  rowsImported: number;
  rowsRejected: number;
  duplicatesSkipped: number;
  amountTotal: number | null;
  reportPath: string | null;
  importedAt: string;
  mapping: ColumnMapping;
}

export const importReportInput = z.strictObject({
  importId: named(z.number().int().positive(), 'the import'),
  offset: pageOffset,
  limit: pageLimit,
});
export interface ImportReportPage {
  importId: number;
  total: number;
  rows: { line: number; column: string; value: string; reason: string }[];
}

export const savedMappingInput = z.strictObject({ kind: named(z.enum(importKinds), 'what the file holds') });
export interface SavedMapping {
  kind: ImportKind;
  /** The mapping last used for this kind, offered again next month; null before the first import. */
  mapping: ColumnMapping | null;
}
