import {
  DEFAULT_CUSTOMERS,
  DEFAULT_SEED,
  MAX_CUSTOMERS,
  generateDemoChain,
  type DemoChainResult,
} from '../../demo/index.js';
import { mkdtempSync, rmSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join, resolve } from 'node:path';
import { InputError } from '../../errors.js';
import { demoDatabaseSummary, loadDemoFiles, type DemoDatabaseJson } from '../../ingest/load-demo.js';
import { openDatabase } from '../../store/database.js';
import { parseInteger, runCommand, type RegisterCommand } from '../run-command.js';

interface DemoOptions {
  out?: string;
  db?: string;
  customers: number;
  seed: number;
  json?: boolean;
}

/** What `demo --json` prints (DESIGN.md §10). */
export interface DemoJson {
  dir: string;
  customers: number;
  receipts: number;
  visits: number;
}

const count = (value: number) => value.toLocaleString('en-GB');

/** `spendmix demo --out DIR`: writes the invented Larkmoor Fresh Markets chain as CSV files. */
export const registerDemo: RegisterCommand = (program, io, setExitCode) => {
  program
    .command('demo')
    .description('Write the invented Larkmoor Fresh Markets demo chain (16 stores, 2025-01-01 to 2026-11-30) as CSV files.')
    .option('--out <dir>', 'folder for the files; created when missing, must be empty or hold only an earlier demo')
    .option('--db <file>', 'load the demo into this database (created when missing) through the importer; files go to a temporary folder unless --out is given')
    .option('--customers <n>', `number of customers, 1 to ${count(MAX_CUSTOMERS)}`, parseInteger('--customers', 1, MAX_CUSTOMERS), DEFAULT_CUSTOMERS)
    .option('--seed <n>', 'seed of the generator; the same seed and customer count give the same files', parseInteger('--seed', 0, 0xffffffff), DEFAULT_SEED)
    .option('--json', 'print one JSON object {dir, customers, receipts, visits}; receipts counts distinct receipts, not department rows')
    .addHelpText(
      'after',
      [
        '',
        'Files written: receipts.csv (one row per receipt and department; refunds are negative),',
        'visits.csv (store and online visits, with or without a purchase), customers.csv, stores.csv,',
        'truth.csv (each customer\'s latent profile, for tests only) and manifest.json (seed and counts).',
        'All names in the demo are invented.',
      ].join('\n'),
    )
    .action(async (options: DemoOptions) => {
      const json = Boolean(options.json);
      setExitCode(
        await runCommand<DemoJson | DemoDatabaseJson>(io, json, async () => {
          if (options.out === undefined && options.db === undefined) {
            throw new InputError('demo needs --out DIR (the folder to write the demo files into) or --db FILE (a database to load it into).');
          }
          const showProgress = !json && process.stderr.isTTY;
          const outDir = options.out ?? mkdtempSync(join(tmpdir(), 'spendmix-demo-'));
          const generationStarted = performance.now();
          const result = await generateDemoChain({
            outDir,
            customers: options.customers,
            seed: options.seed,
            onProgress: showProgress
              ? ({ month, monthsDone, months }) => io.stderr(`\rwriting ${month} (${monthsDone} of ${months} months)${monthsDone === months ? '\n' : ''}`)
              : undefined,
          });
          if (options.db !== undefined) {
            const generationSeconds = (performance.now() - generationStarted) / 1000;
            const importStarted = performance.now();
            const db = openDatabase(options.db);
            try {
              await loadDemoFiles(db, result.files);
              const { receiptRows, ...summary } = demoDatabaseSummary(db, resolve(options.db));
              const importSeconds = (performance.now() - importStarted) / 1000;
              return {
                result: summary,
                human: () =>
                  `Loaded the Larkmoor Fresh Markets demo into ${summary.db}\n` +
                  `  ${count(summary.customers)} customers, ${count(summary.receipts)} receipts (${count(receiptRows)} department rows), ${count(summary.visits)} visits\n` +
                  `  generation ${generationSeconds.toFixed(1)} s, import ${importSeconds.toFixed(1)} s`,
              };
            } finally {
              db.close();
              if (options.out === undefined) rmSync(outDir, { recursive: true, force: true });
            }
          }
          return { result: demoJson(result), human: () => describe(result) };
        }),
      );
    });
};

function demoJson(result: DemoChainResult): DemoJson {
  return { dir: result.dir, customers: result.customers, receipts: result.receipts, visits: result.visits };
}

function describe(result: DemoChainResult): string {
  return [
    `Wrote the Larkmoor Fresh Markets demo to ${result.dir}`,
    `  ${count(result.customers)} customers, ${count(result.receipts)} receipts (${count(result.receiptRows)} department rows, ${count(result.refunds)} refunds), ${count(result.visits)} visits`,
    `  seed ${result.seed}: the same seed and customer count give the same files`,
    '  truth.csv is for tests only; import receipts.csv, visits.csv and customers.csv',
  ].join('\n');
}
