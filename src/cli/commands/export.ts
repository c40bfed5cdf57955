import { exportRunInput, type ApiInput, type ExportResult } from '../../api/contract.js';
import { requireExistingDatabase, withApi } from '../api-client.js';
import { runCommand, type RegisterCommand } from '../run-command.js';
import { addSchemaOptions, inputFromFlags, schemaOptions } from '../schema-options.js';

interface ExportCliOptions {
  db?: string;
  run?: string;
  includeReviewed: boolean;
  csvRawIds?: boolean;
  json?: boolean;
  [flag: string]: unknown;
}

function describe(result: ExportResult): string {
  return [
    `Wrote ${result.out}`,
    result.sheets.length > 0 ? `  sheets: ${result.sheets.join(', ')}` : '  campaign list (CSV, UTF-8 with BOM)',
    `  customers listed ${result.customersExported.toLocaleString('en-GB')}`,
    `  left out for no or unknown marketing consent ${result.suppressedNoConsent.toLocaleString('en-GB')}`,
  ].join('\n');
}

const exportFlags = schemaOptions(exportRunInput.shape, ['runId', 'includeReviewed', 'csvRawIds']);

/**
 * `spendmix export --db FILE --run ID|latest --out FILE.xlsx [--format xlsx|csv] [--segments a,b]
 * [--min-confidence X] [--no-include-reviewed]` (DESIGN.md §10): the Export screen's call.
 */
export const registerExport: RegisterCommand = (program, io, setExitCode) => {
  const command = program
    .command('export')
    .description('Write a run as a labelled Excel workbook, or a campaign list as CSV; customers without marketing consent are never listed, only counted.')
    .option('--db <file>', 'the database holding the run')
    .option('--run <id|latest>', 'run id, or "latest" for the newest run');
  addSchemaOptions(command, exportFlags)
    .option('--include-reviewed', 'list customers with a keep or move review decision (the default)', true)
    .option('--no-include-reviewed', 'leave out every customer with a review decision')
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
          const db = requireExistingDatabase(options.db, 'export');
          const showProgress = !json && process.stderr.isTTY;
          const result = await withApi(db, async (api) => {
            const input = {
              ...inputFromFlags(exportFlags, options),
              includeReviewed: options.includeReviewed,
              csvRawIds: Boolean(options.csvRawIds),
              runId: await api.runId(options.run, 'export'),
            };
            return api.run('exportRun', input as ApiInput<'exportRun'>, showProgress ? (progress) => io.stderr(`\r${progress.message}\x1b[K`) : undefined);
          });
          if (showProgress) io.stderr('\n');
          return { result, human: describe };
        }),
      );
    });
};
