import type { FeaturesSqlResult } from '../../api/contract.js';
import { callApi } from '../../api/handlers.js';
import { ApiSession } from '../../api/session.js';
import { InputError } from '../../errors.js';
import { parseNumber, runCommand, type RegisterCommand } from '../run-command.js';

interface FeaturesSqlOptions {
  asOf?: string;
  windowMonths?: number;
  dialect?: string;
  receiptsTable?: string;
  visitsTable?: string;
  customersTable?: string;
  minPurchases?: number;
  minTenureMonths?: number;
  json?: boolean;
}

/**
 * `spendmix features-sql --as-of YYYY-MM-DD [--window-months N] [--dialect duckdb|postgres|sqlite]
 * [--receipts-table T] [--visits-table T] [--customers-table T]` (DESIGN.md §10): prints the feature
 * query for the chain's own engine. Through the API's featuresSql, so limits and defaults are the
 * contract's (the window as for a run).
 */
export const registerFeaturesSql: RegisterCommand = (program, io, setExitCode) => {
  program
    .command('features-sql')
    .description("Print the SQL that computes every customer's features in the chain's own engine (its output imports with import --features).")
    .option('--as-of <date>', 'last day of the window, YYYY-MM-DD')
    .option('--window-months <n>', 'trailing window in months, as for a run (default 12)', parseNumber('--window-months'))
    .option('--dialect <name>', 'duckdb, postgres or sqlite (default duckdb)')
    .option('--receipts-table <name>', 'receipts table: customer_id, date, amount, receipt_id, store_id, category (default receipts)')
    .option('--visits-table <name>', 'visits table: customer_id, date, store_id, channel (default visits)')
    .option('--customers-table <name>', 'customers table: customer_id, joined, marketing_consent (default customers)')
    .option('--min-purchases <n>', 'too new to place below this many purchases (default 2)', parseNumber('--min-purchases'))
    .option('--min-tenure-months <n>', 'too new to place below this tenure (default 2)', parseNumber('--min-tenure-months'))
    .option('--json', 'print one JSON object {sql, dialect, asOf, windowMonths, windowStart, tables, columns}')
    .addHelpText('after', '\nThe query returns one row per customer: customer_id, the features under the app\'s names, too_new (1 = too new to place).')
    .action(async (options: FeaturesSqlOptions) => {
      const json = Boolean(options.json);
      setExitCode(
        await runCommand(io, json, async () => {
          if (!options.asOf) throw new InputError('features-sql needs --as-of YYYY-MM-DD: the last day of the window.');
          const session = new ApiSession({ shell: 'cli' });
          try {
            const result = (await callApi(session, 'featuresSql', {
              asOf: options.asOf,
              windowMonths: options.windowMonths,
              minPurchases: options.minPurchases,
              minTenureMonths: options.minTenureMonths,
              dialect: options.dialect,
              receiptsTable: options.receiptsTable,
              visitsTable: options.visitsTable,
              customersTable: options.customersTable,
            })) as FeaturesSqlResult;
            return { result, human: (query) => query.sql };
          } finally {
            await session.close();
          }
        }),
      );
    });
};
