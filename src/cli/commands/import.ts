import { defaultPlausibleDates, importEncodings } from '../../api/contract.js';
import { InputError } from '../../errors.js';
import type { EncodingChoice } from '../../ingest/file-probe.js';
import { importFile, DEFAULT_MAX_REJECTED_SHARE, type ImportResult } from '../../ingest/import-file.js';
import { parseMapOptions } from '../../ingest/mapping.js';
import { DATE_FORMATS, type DateFormat } from '../../ingest/values.js';
import { openDatabase } from '../../store/database.js';
import { IMPORT_KINDS, type ImportKind } from '../../store/imports-repo.js';
import { parseNumber, runCommand, type RegisterCommand } from '../run-command.js';

interface ImportCliOptions {
  db?: string;
  receipts?: string;
  visits?: string;
  customers?: string;
  features?: string;
  map: string[];
  sheet?: string;
  dateFormat: string;
  decimalComma?: boolean;
  maxRejectedShare: number;
  delimiter?: string;
  encoding: string;
  plausibleDates: string;
  json?: boolean;
}

const collect = (value: string, previous: string[]) => [...previous, value];

const DELIMITER_NAMES: Record<string, string> = { comma: ',', semicolon: ';', tab: '\t', pipe: '|', ',': ',', ';': ';', '\\t': '\t', '|': '|' };

function chooseFile(options: ImportCliOptions): { kind: ImportKind; path: string } {
  const given = IMPORT_KINDS.filter((kind) => options[kind] !== undefined);
  if (given.length !== 1) {
    throw new InputError(
      given.length === 0
        ? 'import needs one file: --receipts FILE, --visits FILE, --customers FILE or --features FILE.'
        : `import takes one file at a time; got ${given.map((kind) => `--${kind}`).join(' and ')}.`,
    );
  }
  return { kind: given[0], path: options[given[0]]! };
}

const money = (value: number) => value.toLocaleString('en-GB', { minimumFractionDigits: 2, maximumFractionDigits: 2 });

function describe(result: ImportResult): string {
  if (result.alreadyImported) return `${result.file} was imported before (same content); nothing changed.`;
  return [
    `Imported ${result.kind} from ${result.file}`,
    `  rows read ${result.rowsRead}, imported ${result.rowsImported}, rejected ${result.rowsRejected}, duplicates skipped ${result.duplicatesSkipped}`,
    ...(result.amountTotal !== null ? [`  amount imported ${money(result.amountTotal)} EUR`] : []),
    ...(result.report ? [`  rejected rows and reasons: ${result.report}`] : []),
  ].join('\n');
}

/** `spendmix import --db FILE (--receipts F | --visits F | --customers F | --features F) [--map col=field]… [--sheet NAME]` (DESIGN.md §10). */
export const registerImport: RegisterCommand = (program, io, setExitCode) => {
  program
    .command('import')
    .description('Load one CSV or XLSX file into the database: all of its valid rows or nothing; a file imported before is recognised.')
    .option('--db <file>', 'database to load into; created when missing')
    .option('--receipts <file>', 'receipts (one row per receipt, or per receipt and department)')
    .option('--visits <file>', 'store and online visits')
    .option('--customers <file>', 'customers: joined, marketing_consent, home_store')
    .option('--features <file>', 'a per-customer numeric table prepared elsewhere')
    .option('--map <column=field>', 'read a column as a field (repeatable); FIELD "ignore" leaves a column out', collect, [])
    .option('--sheet <name>', 'XLSX: the sheet to read (default the first)')
    .option('--date-format <format>', `how non-ISO dates are read: ${DATE_FORMATS.join(', ')} (ISO dates are always accepted)`, 'iso')
    .option('--decimal-comma', 'amounts use a decimal comma (12,50)')
    .option(
      '--max-rejected-share <x>',
      'refuse the whole file above this share of rejected rows (0 to 1)',
      parseNumber('--max-rejected-share', 0, 1),
      DEFAULT_MAX_REJECTED_SHARE,
    )
    .option('--delimiter <d>', 'CSV: comma, semicolon, tab or pipe instead of detecting it')
    .option('--encoding <name>', `CSV: ${importEncodings.join(' or ')} (a file that is not UTF-8 is refused, naming this option)`, 'utf-8')
    .option(
      '--plausible-dates <from..to>',
      'reject rows dated outside this range, listing them in the report (default 1990-01-01 to a year after today)',
      `${defaultPlausibleDates().from}..${defaultPlausibleDates().to}`,
    )
    .option('--json', 'print one JSON object {file, kind, rowsRead, rowsImported, rowsRejected, duplicatesSkipped, alreadyImported, amountTotal, report}')
    .addHelpText(
      'after',
      '\nColumns named as the fields (or common English synonyms) map by themselves; the mapping used is saved\n' +
        'per kind and reused next time. Rejected rows are listed in a report CSV next to the database.',
    )
    .action(async (options: ImportCliOptions) => {
      const json = Boolean(options.json);
      setExitCode(
        await runCommand(io, json, async () => {
          if (!options.db) throw new InputError('import needs --db FILE: the database to load into (created when missing).');
          const { kind, path } = chooseFile(options);
          if (!(DATE_FORMATS as readonly string[]).includes(options.dateFormat)) {
            throw new InputError(`--date-format must be one of ${DATE_FORMATS.join(', ')}; got "${options.dateFormat}".`);
          }
          let delimiter: string | undefined;
          if (options.delimiter !== undefined) {
            delimiter = DELIMITER_NAMES[options.delimiter];
            if (delimiter === undefined) throw new InputError(`--delimiter must be comma, semicolon, tab or pipe; got "${options.delimiter}".`);
          }
          if (!(importEncodings as readonly string[]).includes(options.encoding)) {
            throw new InputError(`--encoding must be ${importEncodings.join(' or ')}; got "${options.encoding}".`);
          }
          const range = /^(\d{4}-\d{2}-\d{2})\.\.(\d{4}-\d{2}-\d{2})$/.exec(options.plausibleDates.trim());
          if (!range) throw new InputError(`--plausible-dates must be FROM..TO, two dates YYYY-MM-DD; got "${options.plausibleDates}".`);
          const mapping = parseMapOptions(options.map);
          const db = openDatabase(options.db);
          try {
            const showProgress = !json && process.stderr.isTTY;
            const result = await importFile(db, {
              path,
              kind,
              mapping,
              options: {
                sheet: options.sheet,
                dateFormat: options.dateFormat as DateFormat,
                decimalComma: Boolean(options.decimalComma),
                maxRejectedShare: options.maxRejectedShare,
                delimiter,
                encoding: options.encoding as EncodingChoice,
                plausibleDates: { from: range[1], to: range[2] },
              },
              onProgress: showProgress
                ? ({ phase, rows, bytes, totalBytes }) =>
                    io.stderr(`\r${phase} ${rows.toLocaleString('en-GB')} rows, ${Math.round((100 * bytes) / Math.max(1, totalBytes))}%   ${phase === 'done' ? '\n' : ''}`)
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
