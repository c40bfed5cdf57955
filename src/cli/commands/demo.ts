import { parseInput } from '../../api/api-errors.js';
import { demoFilesInput, type ApiInput } from '../../api/contract.js';
import { generateDemoChain, type DemoChainResult } from '../../demo/index.js';
import { InputError } from '../../errors.js';
import { withApi } from '../api-client.js';
import { runCommand, type RegisterCommand } from '../run-command.js';
import { addSchemaOptions, inputFromFlags, schemaOptions } from '../schema-options.js';

interface DemoOptions {
  out?: string;
  db?: string;
  json?: boolean;
  [flag: string]: unknown;
}

/** What `demo --json` prints (DESIGN.md §10). */
export interface DemoJson {
  dir: string;
  customers: number;
  receipts: number;
  visits: number;
}

const count = (value: number) => value.toLocaleString('en-GB');

const chainFlags = schemaOptions(demoFilesInput.shape, ['out']);

function describeFiles(result: DemoChainResult): string {
  return [
    `Wrote the Larkmoor Fresh Markets demo to ${result.dir}`,
    `  ${count(result.customers)} customers, ${count(result.receipts)} receipts (${count(result.receiptRows)} department rows, ${count(result.refunds)} refunds), ${count(result.visits)} visits`,
    `  seed ${result.seed}: the same seed and customer count give the same files`,
    '  truth.csv is for tests only; import receipts.csv, visits.csv and customers.csv',
  ].join('\n');
}

/**
 * `spendmix demo --out DIR`: writes the invented Larkmoor Fresh Markets chain as CSV files (a
 * command-line tool: files on this machine). `demo --db FILE`: the app's demo load, through the
 * API; with --out as well the same files are also written to DIR.
 */
export const registerDemo: RegisterCommand = (program, io, setExitCode) => {
  const command = program
    .command('demo')
    .description('Write the invented Larkmoor Fresh Markets demo chain (16 stores, 2025-01-01 to 2026-11-30) as CSV files, or load it into a database.')
    .option('--out <dir>', 'folder for the files; created when missing, must be empty or hold only an earlier demo')
    .option('--db <file>', 'load the demo into this database (created when missing) through the importer');
  addSchemaOptions(command, chainFlags)
    .option('--json', 'print one JSON object {dir, customers, receipts, visits} (with --db: {db, customers, receipts, visits})')
    .addHelpText(
      'after',
      [
        '',
        'In the JSON, receipts counts distinct receipts, not department rows.',
        'Files written: receipts.csv (one row per receipt and department; refunds are negative),',
        'visits.csv (store and online visits, with or without a purchase), customers.csv, stores.csv,',
        'truth.csv (each customer\'s latent profile, for tests only) and manifest.json (seed and counts).',
        'All names in the demo are invented.',
      ].join('\n'),
    )
    .action(async (options: DemoOptions) => {
      const json = Boolean(options.json);
      setExitCode(
        await runCommand<unknown>(io, json, async () => {
          if (options.out === undefined && options.db === undefined) {
            throw new InputError('demo needs --out DIR (the folder to write the demo files into) or --db FILE (a database to load it into).');
          }
          const chain = inputFromFlags(chainFlags, options);
          const showProgress = !json && process.stderr.isTTY;
          let files: DemoChainResult | undefined;
          if (options.out !== undefined) {
            const settings = parseInput('demo', demoFilesInput, { ...chain, out: options.out });
            files = await generateDemoChain({
              outDir: settings.out,
              customers: settings.customers,
              seed: settings.seed,
              onProgress: showProgress
                ? ({ month, monthsDone, months }) => io.stderr(`\rwriting ${month} (${monthsDone} of ${months} months)${monthsDone === months ? '\n' : ''}`)
                : undefined,
            });
          }
          if (options.db === undefined) {
            const { dir, customers, receipts, visits } = files!;
            return { result: { dir, customers, receipts, visits } satisfies DemoJson, human: () => describeFiles(files!) };
          }
          // The app's demo load, with the size and seed the flags give (or the demo's defaults).
          const phaseStarted = new Map<string, number>();
          const loaded = await withApi(options.db, (api) =>
            api.run('loadDemo', chain as ApiInput<'loadDemo'>, (progress) => {
              if (!phaseStarted.has(progress.phase.split(' ')[0])) phaseStarted.set(progress.phase.split(' ')[0], performance.now());
              if (showProgress) io.stderr(`\r${progress.message}\x1b[K`);
            }),
          );
          if (showProgress) io.stderr('\n');
          const generation = ((phaseStarted.get('importing') ?? performance.now()) - (phaseStarted.get('generating') ?? performance.now())) / 1000;
          const load = (performance.now() - (phaseStarted.get('importing') ?? performance.now())) / 1000;
          const { receiptRows, ...summary } = loaded;
          return {
            result: summary,
            human: () =>
              `Loaded the Larkmoor Fresh Markets demo into ${summary.db}\n` +
              `  ${count(summary.customers)} customers, ${count(summary.receipts)} receipts (${count(receiptRows)} department rows), ${count(summary.visits)} visits\n` +
              `  generation ${generation.toFixed(1)} s, import ${load.toFixed(1)} s`,
          };
        }),
      );
    });
};
