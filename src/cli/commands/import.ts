import { importFileInput, importKinds, type ImportFileInput, type ImportKind, type ImportResult } from '../../api/contract.js';
import { InputError } from '../../errors.js';
import { withApi } from '../api-client.js';
import { runCommand, type RegisterCommand } from '../run-command.js';
import { addSchemaOptions, inputFromFlags, schemaOptions } from '../schema-options.js';

interface ImportCliOptions {
  db?: string;
  receipts?: string;
  visits?: string;
  customers?: string;
  features?: string;
  map: string[];
  decimalComma?: boolean;
  json?: boolean;
  [flag: string]: unknown;
}

const collect = (value: string, previous: string[]) => [...previous, value];

function chooseFile(options: ImportCliOptions): { kind: ImportKind; path: string } {
  const given = importKinds.filter((kind) => options[kind] !== undefined);
  if (given.length !== 1) {
    throw new InputError(
      given.length === 0
        ? 'import needs one file: --receipts FILE, --visits FILE, --customers FILE or --features FILE.'
        : `import takes one file at a time; got ${given.map((kind) => `--${kind}`).join(' and ')}.`,
    );
  }
  return { kind: given[0], path: options[given[0]]! };
}

/** `--map column=field` pairs as the API's field → column mapping and columns to leave out (`column=ignore`). */
function mappingFromFlags(pairs: readonly string[]): Pick<ImportFileInput, 'mapping' | 'ignoreColumns'> {
  if (pairs.length === 0) return {};
  const mapping: Record<string, string> = {};
  const ignoreColumns: string[] = [];
  for (const pair of pairs) {
    const at = pair.lastIndexOf('=');
    if (at <= 0 || at === pair.length - 1) throw new InputError(`--map expects COLUMN=FIELD (e.g. --map "Card No=customer_id"); got "${pair}".`);
    const column = pair.slice(0, at).trim();
    const field = pair.slice(at + 1).trim();
    if (field === 'ignore') ignoreColumns.push(column);
    else if (mapping[field] !== undefined) throw new InputError(`--map gives field "${field}" two columns; map each field once.`);
    else mapping[field] = column;
  }
  return { mapping, ...(ignoreColumns.length > 0 ? { ignoreColumns } : {}) };
}

const money = (value: number) => value.toLocaleString('en-GB', { minimumFractionDigits: 2, maximumFractionDigits: 2 });

function describe(result: Omit<ImportResult, 'importId'>): string {
  if (result.alreadyImported) return `${result.file} was imported before (same content); nothing changed.`;
  return [
    `Imported ${result.kind} from ${result.file}`,
    `  rows read ${result.rowsRead}, imported ${result.rowsImported}, rejected ${result.rowsRejected}, duplicates skipped ${result.duplicatesSkipped}`,
    ...(result.amountTotal !== null ? [`  amount imported ${money(result.amountTotal)} EUR`] : []),
    ...(result.report ? [`  rejected rows and reasons: ${result.report}`] : []),
  ].join('\n');
}

const readFlags = schemaOptions(importFileInput.shape, ['path', 'kind', 'mapping', 'ignoreColumns', 'decimalSeparator']);

/** `spendmix import --db FILE (--receipts F | --visits F | --customers F | --features F) [--map col=field]… [--sheet NAME]` (DESIGN.md §10). */
export const registerImport: RegisterCommand = (program, io, setExitCode) => {
  const command = program
    .command('import')
    .description('Load one CSV or XLSX file into the database: all of its valid rows or nothing; a file imported before is recognised.')
    .option('--db <file>', 'database to load into; created when missing')
    .option('--receipts <file>', 'receipts (one row per receipt, or per receipt and department)')
    .option('--visits <file>', 'store and online visits')
    .option('--customers <file>', 'customers: joined, marketing_consent, home_store')
    .option('--features <file>', 'a per-customer numeric table prepared elsewhere')
    .option('--map <column=field>', 'read a column as a field (repeatable); FIELD "ignore" leaves a column out', collect, [])
    .option('--decimal-comma', 'amounts use a decimal comma (12,50)');
  addSchemaOptions(command, readFlags)
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
          const input = {
            ...inputFromFlags(readFlags, options),
            ...mappingFromFlags(options.map),
            ...(options.decimalComma ? { decimalSeparator: ',' } : {}),
            path,
            kind,
          };
          const showProgress = !json && process.stderr.isTTY;
          const { importId: _, ...result } = await withApi(options.db, (api) =>
            api.run(
              'importFile',
              input as ImportFileInput,
              showProgress
                ? ({ phase, done, total, message }) => io.stderr(`\r${phase} ${message}${total ? `, ${Math.round((100 * done) / total)}%` : ''}   ${phase === 'done' ? '\n' : ''}`)
                : undefined,
            ),
          );
          return { result, human: describe };
        }),
      );
    });
};
