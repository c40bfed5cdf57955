import { z } from 'zod';
import { named, nonEmpty, probability, runId } from './fields.js';

/** The Export screen and `export`; the demo chain (`demo`, the Sources screen's demo load). */

export const exportFormats = ['xlsx', 'csv'] as const;
export type ExportFormat = (typeof exportFormats)[number];

/** CSV layouts: comma-separated with a decimal point, or semicolon-separated with a decimal comma. */
export const csvDialects = ['comma', 'semicolon'] as const;
export type CsvDialect = (typeof csvDialects)[number];

export const exportRunInput = z.strictObject({
  runId: named(runId, 'the run', '--run'),
  out: named(nonEmpty, 'the output file: .xlsx for the workbook, .csv for a campaign list', '--out <file>'),
  format: named(z.enum(exportFormats).optional(), 'the file format, xlsx for a workbook or csv for a campaign list (absent: from the file name)', '--format'),
  /** Final segment names to list; absent = every segment. */
  segments: named(z.array(nonEmpty).min(1).optional(), 'final segments to list, by name (absent: all)', '--segments <a,b>'),
  minConfidence: named(probability.default(0), 'least confidence of a listed customer', '--min-confidence'),
  includeReviewed: named(z.boolean().default(true), 'list customers with a keep or move review decision', '--include-reviewed'),
  csvDialect: named(
    z.enum(csvDialects).default('comma'),
    'CSV layout: comma (comma-separated, decimal point) or semicolon (semicolon-separated, decimal comma, for spreadsheets set to a locale that writes 1.234,56)',
    '--csv-dialect',
  ),
  csvRawIds: named(
    z.boolean().default(false),
    'CSV: write ids and other text exactly as stored, without the apostrophe put before text beginning with = + - @ (for lists another system reads by id; RISK: a spreadsheet program that opens the file may run such text as a formula)',
    '--csv-raw-ids',
  ),
});
export type ExportRunInput = z.output<typeof exportRunInput>;
/** The `export --json` object of DESIGN.md §10. */
export interface ExportResult {
  out: string;
  sheets: string[];
  customersExported: number;
  suppressedNoConsent: number;
}

/** Customers in the demo chain unless asked for another size, and the generator's seed unless another is given. */
export const DEFAULT_DEMO_CUSTOMERS = 6000;
export const DEFAULT_DEMO_SEED = 2026;

/** How many customers a demo chain may have: a demo, not a load test (200,000 is about 2 GB of CSV). */
export const demoCustomerCount = z.number().int().min(1).max(200_000);

/** The demo chain's size and seed: the same seed and size give the same chain. */
export const demoChainSettings = {
  customers: named(demoCustomerCount.default(DEFAULT_DEMO_CUSTOMERS), 'customers in the demo chain', '--customers'),
  seed: named(z.number().int().min(0).max(2 ** 32 - 1).default(DEFAULT_DEMO_SEED), "the generator's seed", '--seed'),
};

export const loadDemoInput = z.strictObject({
  ...demoChainSettings,
  customers: named(demoCustomerCount.optional(), "customers in the demo chain (absent: the session's demo size)", '--customers'),
});
/** The `demo --db --json` object of DESIGN.md §10, plus the department rows behind the receipts. */
export interface DemoResult {
  db: string;
  customers: number;
  /** Distinct receipts (purchases and refunds). */
  receipts: number;
  visits: number;
  /** Receipt rows: one per receipt and department. */
  receiptRows: number;
}

/** `demo --out DIR`: the chain's files, written on this machine (a command-line tool, not an app action). */
export const demoFilesInput = z.strictObject({
  out: named(nonEmpty, 'the folder for the files', '--out <dir>'),
  ...demoChainSettings,
});
