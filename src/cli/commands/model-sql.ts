import { modelSqlInput, type ApiInput } from '../../api/contract.js';
import { requireExistingDatabase, withApi } from '../api-client.js';
import { runCommand, type RegisterCommand } from '../run-command.js';
import { addSchemaOptions, inputFromFlags, schemaOptions } from '../schema-options.js';

const modelSqlFlags = schemaOptions(modelSqlInput.shape, ['runId']);

/**
 * `spendmix model-sql --db FILE --run ID|latest [--dialect duckdb|postgres|sqlite] [--features-table T] [--out F.sql]`
 * (DESIGN.md §10): prints a run's scoring query, or writes it to a file, through the API's modelSql
 * (the Export screen's section).
 */
export const registerModelSql: RegisterCommand = (program, io, setExitCode) => {
  const command = program
    .command('model-sql')
    .description("Print a run's scoring query for the chain's own engine: the model's arithmetic as SQL over a features table.")
    .option('--db <file>', 'the Spendmix database')
    .option('--run <id|latest>', 'the run whose model to write out, or "latest" for the newest run');
  addSchemaOptions(command, modelSqlFlags)
    .option('--json', 'print one JSON object {sql, dialect, runId, featuresTable, features, segments, components, columns, emptyValues, out}')
    .addHelpText('after', '\nThe query returns customer_id, segment, confidence, margin, borderline, atypical (1/0) for every row of the table.')
    .action(async (flags: Record<string, unknown>) => {
      const json = Boolean(flags.json);
      setExitCode(
        await runCommand(io, json, async () => {
          const db = requireExistingDatabase(flags.db as string | undefined, 'model-sql');
          const result = await withApi(db, async (api) =>
            api.call('modelSql', { ...inputFromFlags(modelSqlFlags, flags), runId: await api.runId(flags.run as string | undefined, 'model-sql') } as ApiInput<'modelSql'>),
          );
          return {
            result,
            human: (query) =>
              query.out === null ? query.sql : `Wrote the scoring query of run ${query.runId} (${query.dialect}, reading ${query.featuresTable}) to ${query.out}`,
          };
        }),
      );
    });
};
