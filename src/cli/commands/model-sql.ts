import { existsSync } from 'node:fs';
import type { ModelSqlResult } from '../../api/contract.js';
import { callApi } from '../../api/handlers.js';
import { ApiSession } from '../../api/session.js';
import { InputError } from '../../errors.js';
import { parseInteger, runCommand, type RegisterCommand } from '../run-command.js';

interface ModelSqlOptions {
  db?: string;
  run?: string;
  dialect?: string;
  featuresTable?: string;
  json?: boolean;
}

/**
 * `spendmix model-sql --db FILE --run ID|latest [--dialect duckdb|postgres|sqlite] [--features-table T]`
 * (DESIGN.md §10): prints a run's scoring query, through the API's modelSql.
 */
export const registerModelSql: RegisterCommand = (program, io, setExitCode) => {
  program
    .command('model-sql')
    .description("Print a run's scoring query for the chain's own engine: the model's arithmetic as SQL over a features table.")
    .option('--db <file>', 'the Spendmix database')
    .option('--run <id|latest>', 'the run whose model to write out')
    .option('--dialect <name>', 'duckdb, postgres or sqlite (default duckdb)')
    .option('--features-table <name>', "table with customer_id and the run's features in original units (default customer_features)")
    .option('--json', 'print one JSON object {sql, dialect, runId, featuresTable, features, segments, components, columns, emptyValues}')
    .addHelpText('after', '\nThe query returns customer_id, segment, confidence, margin, borderline, atypical (1/0) for every row of the table.')
    .action(async (options: ModelSqlOptions) => {
      const json = Boolean(options.json);
      setExitCode(
        await runCommand(io, json, async () => {
          if (!options.db) throw new InputError('model-sql needs --db FILE: the Spendmix database.');
          if (!existsSync(options.db)) throw new InputError(`Database ${options.db} does not exist; create it with "import" or "demo --db" first.`);
          if (!options.run) throw new InputError('model-sql needs --run ID or --run latest: the run whose model to write out.');
          const runId = options.run === 'latest' ? 'latest' : parseInteger('--run', 1)(options.run);
          const session = new ApiSession({ dbPath: options.db, shell: 'cli' });
          try {
            const result = (await callApi(session, 'modelSql', { runId, dialect: options.dialect, featuresTable: options.featuresTable })) as ModelSqlResult;
            return { result, human: (query) => query.sql };
          } finally {
            await session.close();
          }
        }),
      );
    });
};
