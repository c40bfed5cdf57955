import { featuresSqlInput, type FeaturesSqlResult } from '../../api/contract.js';
import { callApi } from '../../api/handlers.js';
import { ApiSession } from '../../api/session.js';
import { runCommand, type RegisterCommand } from '../run-command.js';
import { addSchemaOptions, inputFromFlags, schemaOptions } from '../schema-options.js';

const featuresSqlFlags = schemaOptions(featuresSqlInput.shape);

/**
 * `spendmix features-sql --as-of YYYY-MM-DD [--window-months N] [--dialect duckdb|postgres|sqlite]
 * [--receipts-table T] [--visits-table T] [--customers-table T]` (DESIGN.md §10): prints the feature
 * query for the chain's own engine, through the API's featuresSql (no database needed), so limits
 * and defaults are the contract's (the window and too-new thresholds as for a run).
 */
export const registerFeaturesSql: RegisterCommand = (program, io, setExitCode) => {
  addSchemaOptions(
    program
      .command('features-sql')
      .description("Print the SQL that computes every customer's features in the chain's own engine (its output imports with import --features)."),
    featuresSqlFlags,
  )
    .option('--json', 'print one JSON object {sql, dialect, asOf, windowMonths, windowStart, tables, columns}')
    .addHelpText(
      'after',
      '\nTables have the import files\' field names: receipts (customer_id, date, amount, receipt_id, store_id, category),\n' +
        'visits (customer_id, date, store_id, channel), customers (customer_id, joined, marketing_consent).\n' +
        "The query returns one row per customer: customer_id, the features under the app's names, too_new (1 = too new to place).",
    )
    .action(async (flags: Record<string, unknown>) => {
      const json = Boolean(flags.json);
      setExitCode(
        await runCommand(io, json, async () => {
          const session = new ApiSession({ shell: 'cli' });
          try {
            const result = (await callApi(session, 'featuresSql', inputFromFlags(featuresSqlFlags, flags))) as FeaturesSqlResult;
            return { result, human: (query) => query.sql };
          } finally {
            await session.close();
          }
        }),
      );
    });
};
