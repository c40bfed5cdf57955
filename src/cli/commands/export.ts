import { existsSync } from 'node:fs';
import { InputError } from '../../errors.js';
import { csvDialects, type CsvDialect } from '../../export/csv-writer.js';
import { exportFormats, exportRun, type ExportFormat, type ExportResult } from '../../export/export-run.js';
import { openDatabase } from '../../store/database.js';
import { parseNumber, runCommand, type RegisterCommand } from '../run-command.js';

interface ExportCliOptions {
  db?: string;
  run?: string;
  out?: string;
  format?: string;
  segments?: string;
  minConfidence: number;
  includeReviewed: boolean;
  csvDialect?: string;
  csvRawIds?: boolean;
  json?: boolean;
}

/** `--run ID|latest` → a run id or 'latest'. */
export function parseRunOption(raw: string | undefined): number | 'latest' {
  if (raw === undefined) throw new InputError('export needs --run ID or --run latest.');
  const text = raw.trim();
  if (text === 'latest') return 'latest';
  if (!/^\d+$/.test(text) || !Number.isSafeInteger(Number(text)) || Number(text) < 1) {
    throw new InputError(`--run must be a run id (a whole number from 1) or "latest"; got "${raw}".`);
  }
  return Number(text);
}

/** `--segments a,b` → names; commas inside a name are not supported (rename the segment first). */
export function parseSegmentsOption(raw: string | undefined): string[] | undefined {
  if (raw === undefined) return undefined;
  const names = raw.split(',').map((name) => name.trim()).filter((name) => name.length > 0);
  if (names.length === 0) throw new InputError('--segments needs at least one segment name (comma-separated).');
  return names;
}

function parseFormatOption(raw: string | undefined): ExportFormat | undefined {
  if (raw === undefined) return undefined;
  if (!(exportFormats as readonly string[]).includes(raw)) throw new InputError(`--format must be xlsx or csv; got "${raw}".`);
  return raw as ExportFormat;
}

function describe(result: ExportResult): string {
  return [
    `Wrote ${result.out}`,
    result.sheets.length > 0 ? `  sheets: ${result.sheets.join(', ')}` : '  campaign list (CSV, UTF-8 with BOM)',
    `  customers listed ${result.customersExported.toLocaleString('en-GB')}`,
    `  left out for no or unknown marketing consent ${result.suppressedNoConsent.toLocaleString('en-GB')}`,
  ].join('\n');
}

/** `spendmix export --db FILE --run ID|latest --out FILE.xlsx [--segments a,b] [--min-confidence X]` (DESIGN.md §10). */
export const registerExport: RegisterCommand = (program, io, setExitCode) => {
  program
    .command('export')
    .description('Write a run as a labelled Excel workbook, or a campaign list as CSV; customers without marketing consent are never listed, only counted.')
    .option('--db <file>', 'the database holding the run')
    .option('--run <id|latest>', 'run id, or "latest" for the newest run')
    .option('--out <file>', 'output file: .xlsx for the workbook, .csv for a campaign list')
    .option('--format <xlsx|csv>', 'output format (default from the file name)')
    .option('--segments <a,b>', 'list only these final segments (comma-separated names; default all)')
    .option('--min-confidence <x>', 'list only customers the model places with at least this confidence (0 to 1)', parseNumber('--min-confidence', 0, 1), 0)
    .option('--include-reviewed', 'list customers with a keep or move review decision', true)
    .option('--no-include-reviewed', 'leave out every customer with a review decision')
    .option('--csv-dialect <comma|semicolon>', 'CSV: comma-separated with a decimal point (default), or semicolon-separated with a decimal comma (for spreadsheets set to a locale that writes 1.234,56)')
    .option(
      '--csv-raw-ids',
      'CSV: write ids and other text exactly as stored, without the apostrophe put before text beginning with = + - @. For lists another system reads by id. RISK: a spreadsheet program that opens the file may run such text as a formula; do not open it in one',
    )
    .option('--json', 'print one JSON object {out, sheets, customersExported, suppressedNoConsent}')
    .addHelpText(
      'after',
      '\nThe file is written under a temporary name beside the target and renamed when complete, so a failed or\n' +
        'cancelled export leaves nothing. Customers excluded by review are never listed. Reviewed customers pass\n' +
        '--min-confidence: a person placed them.',
    )
    .action(async (options: ExportCliOptions) => {
      const json = Boolean(options.json);
      setExitCode(
        await runCommand(io, json, async () => {
          if (!options.db) throw new InputError('export needs --db FILE: the database holding the run.');
          const run = parseRunOption(options.run);
          if (!options.out) throw new InputError('export needs --out FILE.xlsx (workbook) or --out FILE.csv (campaign list).');
          const format = parseFormatOption(options.format);
          const segments = parseSegmentsOption(options.segments);
          if (options.csvDialect !== undefined && !(csvDialects as readonly string[]).includes(options.csvDialect)) {
            throw new InputError(`--csv-dialect must be ${csvDialects.join(' or ')}; got "${options.csvDialect}".`);
          }
          if (!existsSync(options.db)) throw new InputError(`Database ${options.db} does not exist.`);
          const db = openDatabase(options.db);
          try {
            const showProgress = !json && process.stderr.isTTY;
            const result = await exportRun(db, {
              run,
              out: options.out,
              format,
              segments,
              minConfidence: options.minConfidence,
              includeReviewed: options.includeReviewed,
              csvDialect: options.csvDialect as CsvDialect | undefined,
              csvRawIds: Boolean(options.csvRawIds),
              onProgress: showProgress
                ? (progress) => io.stderr(`\r${progress.message}   ${progress.phase === 'finishing' ? '\n' : ''}`)
                : undefined,
            });
            return { result, human: describe };
          } finally {
            db.close();
          }
        }),
      );
    });
};
