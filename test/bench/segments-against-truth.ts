/**
 * How well a default monthly run recovers a generated chain's ground truth, reported as an analyst
 * would see it (segments, names, shares, spend medians, borderline share, atypical, review queue)
 * plus the adjusted Rand index (ARI) of the segments against the truth on placed customers.
 *
 *   npx tsx test/bench/segments-against-truth.ts [--chain second|demo] [--customers N] [--seed N]
 *       [--tiers overlapping|separated]   (second chain only: its tiers as first written, or further
 *                                          apart as on the chain the segments issue measured)
 *   npx tsx test/bench/segments-against-truth.ts --dir FOLDER [--as-of YYYY-MM-DD]
 *       options: --sklearn       cross-check the ARI with scikit-learn (Debian's /usr/bin/python3)
 *                --two-features  also fit 4 components on log visit rate and log basket only
 *                --fit-seeds 1,2,3,4  also refresh the same month with these EM seeds (the default
 *                                run's is 0) and report each and the mean: one seed's ARI moves by a
 *                                few hundredths with the starts alone
 *                --levels        also the ARI at every level of the default run's combining tree (the
 *                                run is put back to the automatic level afterwards)
 *                --best-grouping also the best ARI any grouping of the default run's components
 *                                reaches (test/bench/best-grouping.py, Debian's /usr/bin/python3):
 *                                what no combining rule can beat with these components
 *                --keep          keep the working folder (database and files)
 *                --json          one JSON object instead of the text report
 *
 * `--chain second` (default) generates the second test chain (test/support/second-chain) and
 * imports its files with the CLI's `import`; `--chain demo` runs the CLI's `demo --out --db`
 * (the demo's truth.csv names profiles; they are used as its truth as they are); `--dir` imports
 * receipts.csv, visits.csv and customers.csv of a folder that also holds truth.csv. Then the
 * DEFAULT `refresh --as-of <last day>`. Times are wall-clock on this machine, for orientation.
 */
import Database from 'better-sqlite3';
import { spawnSync } from 'node:child_process';
import { existsSync, mkdtempSync, readFileSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join, resolve } from 'node:path';
import { fileURLToPath } from 'node:url';
import { parseArgs } from 'node:util';
import { runMonth } from '../support/core-calls.js';
import { spendmixJson, type ImportJson } from '../support/cli-runner.js';
import { CHAIN_SIZE, generateSecondChain, type TierSpacing } from '../support/second-chain/generate.js';
import {
  describeDrift,
  describeEvaluation,
  evaluateAgainstTruth,
  evaluateDrift,
  placedLabels,
  readStoppedOn,
  readTruthFile,
  type DriftEvaluation,
  type Truth,
  type TruthEvaluation,
} from '../support/truth-evaluation.js';

const { values } = parseArgs({
  options: {
    chain: { type: 'string', default: 'second' },
    dir: { type: 'string' },
    'as-of': { type: 'string' },
    customers: { type: 'string' },
    seed: { type: 'string' },
    tiers: { type: 'string', default: 'overlapping' },
    sklearn: { type: 'boolean', default: false },
    'two-features': { type: 'boolean', default: false },
    'fit-seeds': { type: 'string' },
    levels: { type: 'boolean', default: false },
    'best-grouping': { type: 'boolean', default: false },
    keep: { type: 'boolean', default: false },
    json: { type: 'boolean', default: false },
  },
  strict: true,
});

const log = (text: string) => {
  if (!values.json) process.stdout.write(`${text}\n`);
};
const seconds = (started: number) => Number(((performance.now() - started) / 1000).toFixed(1));

/** Imports a chain folder's three files through the CLI, customers first. */
async function importFolder(dbPath: string, dataDir: string): Promise<ImportJson[]> {
  const results: ImportJson[] = [];
  for (const kind of ['customers', 'receipts', 'visits'] as const) {
    const result = await spendmixJson<ImportJson>('import', '--db', dbPath, `--${kind}`, join(dataDir, `${kind}.csv`));
    log(
      `import ${kind}: read ${result.rowsRead}, imported ${result.rowsImported}, rejected ${result.rowsRejected}, duplicates ${result.duplicatesSkipped}` +
        (result.amountTotal === null ? '' : `, amount EUR ${result.amountTotal.toFixed(2)}`),
    );
    results.push(result);
  }
  return results;
}

function lastDateOf(dataDir: string): string {
  const manifestPath = join(dataDir, 'manifest.json');
  if (values['as-of']) return values['as-of'];
  if (!existsSync(manifestPath)) throw new Error(`${dataDir} has no manifest.json; give --as-of YYYY-MM-DD.`);
  const manifest = JSON.parse(readFileSync(manifestPath, 'utf8')) as { lastDate?: string };
  if (!manifest.lastDate) throw new Error(`${manifestPath} has no lastDate; give --as-of YYYY-MM-DD.`);
  return manifest.lastDate;
}

/** The ARI of the same labels by scikit-learn's adjusted_rand_score (Debian python3-sklearn). */
function sklearnAri(work: string, dbPath: string, runId: number, truth: Truth): number {
  const labels = placedLabels(dbPath, runId, truth);
  const csvPath = join(work, `labels-run-${runId}.csv`);
  writeFileSync(csvPath, `truth,segment\n${labels.truthLabels.map((label, i) => `${label},${labels.segments[i]}\n`).join('')}`);
  const script = [
    'import csv, sys',
    'from sklearn.metrics import adjusted_rand_score',
    'rows = list(csv.DictReader(open(sys.argv[1])))',
    "print(repr(adjusted_rand_score([r['truth'] for r in rows], [r['segment'] for r in rows])))",
  ].join('\n');
  const run = spawnSync('/usr/bin/python3', ['-c', script, csvPath], { encoding: 'utf8' });
  if (run.status !== 0) throw new Error(`scikit-learn cross-check failed: ${run.stderr}`);
  return Number(run.stdout.trim());
}

/** The ARI at every level of a run's combining tree, most segments first; the run ends at the automatic level again. */
async function ariByLevel(dbPath: string, runId: number, truth: Truth): Promise<{ segments: number; ari: number; chosen: boolean }[]> {
  const tree = await spendmixJson<{ segmentCount: number; levels: { segmentCount: number }[] }>('segments', '--db', dbPath, '--run', String(runId), 'tree', '--json');
  const results: { segments: number; ari: number; chosen: boolean }[] = [];
  try {
    for (const { segmentCount } of tree.levels) {
      await spendmixJson('segments', '--db', dbPath, '--run', String(runId), 'level', String(segmentCount), '--json');
      results.push({ segments: segmentCount, ari: (await evaluateAgainstTruth(dbPath, runId, truth)).ari, chosen: segmentCount === tree.segmentCount });
    }
  } finally {
    await spendmixJson('segments', '--db', dbPath, '--run', String(runId), 'level', 'auto', '--json');
  }
  return results;
}

/** test/bench/best-grouping.py on a run: its printed lines. */
function bestGrouping(dbPath: string, truthPath: string, runId: number): string {
  const script = fileURLToPath(new URL('./best-grouping.py', import.meta.url));
  const run = spawnSync('/usr/bin/python3', [script, dbPath, truthPath, String(runId), '--max-groups', '8'], { encoding: 'utf8' });
  if (run.status !== 0) throw new Error(`best-grouping.py failed: ${run.stderr}`);
  return run.stdout.trimEnd();
}

/** The EM seeds of --fit-seeds ("1,2,3"): non-negative integers other than the default 0. */
function fitSeeds(list: string | undefined): number[] {
  if (list === undefined) return [];
  const seeds = list.split(',').map((part) => Number(part.trim()));
  if (seeds.some((seed) => !Number.isInteger(seed) || seed < 0)) throw new Error(`--fit-seeds takes non-negative integers separated by commas; got "${list}".`);
  return [...new Set(seeds)].filter((seed) => seed !== 0);
}

/** A 4-component fit on log visit rate and log basket only, stored as another run of the same month. */
async function twoFeatureRun(dbPath: string, asOf: string, covariance: 'auto' | 'full'): Promise<number> {
  const db = new Database(dbPath);
  try {
    const summary = await runMonth(db, {
      asOf,
      windowMonths: 12,
      mode: 'refit',
      k: 4,
      covariance,
      features: [
        { feature: 'visits_per_month', log1p: true, zScore: true },
        { feature: 'average_basket', log1p: true, zScore: true },
      ],
    });
    return summary.runId;
  } finally {
    db.close();
  }
}

async function main(): Promise<void> {
  const work = mkdtempSync(join(tmpdir(), 'spendmix-truth-'));
  const dbPath = join(work, 'chain.db');
  const chain = values.dir ? 'folder' : values.chain;
  let dataDir: string;
  let generationSeconds: number | null = null;
  let importSeconds: number;
  let imports: ImportJson[] = [];
  try {
    const started = performance.now();
    if (values.dir) {
      dataDir = resolve(values.dir);
      importSeconds = 0;
    } else if (values.chain === 'demo') {
      dataDir = join(work, 'data');
      const demoArgs = ['demo', '--out', dataDir, '--db', dbPath];
      if (values.customers) demoArgs.push('--customers', values.customers);
      if (values.seed) demoArgs.push('--seed', values.seed);
      const demo = await spendmixJson<{ customers: number; receipts: number; visits: number }>(...demoArgs);
      log(`demo (generate + import): ${demo.customers} customers, ${demo.receipts} receipts, ${demo.visits} visits`);
      importSeconds = seconds(started);
    } else if (values.chain === 'second') {
      dataDir = join(work, 'data');
      const generated = generateSecondChain({
        outDir: dataDir,
        customers: values.customers ? Number(values.customers) : CHAIN_SIZE.defaultCustomers,
        seed: values.seed ? Number(values.seed) : CHAIN_SIZE.defaultSeed,
        tiers: values.tiers as TierSpacing,
      });
      generationSeconds = seconds(started);
      log(
        `${generated.chain} (seed ${generated.seed}, ${generated.tierSpacing} tiers): ${generated.customers} customers, ${generated.receipts} receipts, ${generated.visits} visits, ` +
          `tiers ${JSON.stringify(generated.tiers)}, groups ${JSON.stringify(generated.groups)} (${generationSeconds} s)`,
      );
      importSeconds = 0;
    } else {
      throw new Error(`--chain must be second or demo; got "${values.chain}".`);
    }
    if (chain !== 'demo') {
      const importStarted = performance.now();
      imports = await importFolder(dbPath, dataDir);
      importSeconds = seconds(importStarted);
    }

    const asOf = lastDateOf(dataDir);
    const truth = readTruthFile(join(dataDir, 'truth.csv'));
    const refreshStarted = performance.now();
    const summary = await spendmixJson<{ runId: number }>('refresh', '--db', dbPath, '--as-of', asOf);
    const refreshSeconds = seconds(refreshStarted);
    const evaluation = await evaluateAgainstTruth(dbPath, summary.runId, truth);
    log(`\ndefault refresh --as-of ${asOf} (${refreshSeconds} s; import ${importSeconds} s)`);
    log(describeEvaluation(evaluation));
    // The second chain's customers who drifted away keep their tier in the truth; where they end up is shown apart.
    const stoppedOn = readStoppedOn(join(dataDir, 'truth.csv'));
    const driftOf = (runId: number): DriftEvaluation | null => (stoppedOn.size === 0 ? null : evaluateDrift(dbPath, runId, truth, stoppedOn, asOf));
    const drift = driftOf(summary.runId);
    if (drift) log(`\n${describeDrift(drift)}`);

    let sklearn: number | null = null;
    if (values.sklearn) {
      sklearn = sklearnAri(work, dbPath, summary.runId, truth);
      log(`scikit-learn adjusted_rand_score on the same labels: ${sklearn.toFixed(4)} (difference ${Math.abs(sklearn - evaluation.ari).toExponential(1)})`);
    }

    let levels: { segments: number; ari: number; chosen: boolean }[] = [];
    if (values.levels) {
      levels = await ariByLevel(dbPath, summary.runId, truth);
      log('\nARI at every level of the combining tree (← the automatic level):');
      for (const level of levels) log(`  ${String(level.segments).padStart(2)} segments: ARI ${level.ari.toFixed(4)}${level.chosen ? '  ←' : ''}`);
    }
    let bestGroupingLines: string | null = null;
    if (values['best-grouping']) {
      bestGroupingLines = bestGrouping(dbPath, join(dataDir, 'truth.csv'), summary.runId);
      log(`\nbest grouping of the default run's components (each customer with its most probable component):\n${bestGroupingLines}`);
    }

    const twoFeatures: { covariance: string; evaluation: TruthEvaluation }[] = [];
    if (values['two-features']) {
      for (const covariance of ['auto', 'full'] as const) {
        const runId = await twoFeatureRun(dbPath, asOf, covariance);
        const result = await evaluateAgainstTruth(dbPath, runId, truth);
        twoFeatures.push({ covariance, evaluation: result });
        log(`\n4 components on log visit rate and log basket (covariance ${covariance}):`);
        log(describeEvaluation(result));
      }
    }

    const bySeed: { seed: number; evaluation: TruthEvaluation; drift: DriftEvaluation | null }[] = [{ seed: 0, evaluation, drift }];
    for (const seed of fitSeeds(values['fit-seeds'])) {
      const other = await spendmixJson<{ runId: number }>('refresh', '--db', dbPath, '--as-of', asOf, '--seed', String(seed));
      bySeed.push({ seed, evaluation: await evaluateAgainstTruth(dbPath, other.runId, truth), drift: driftOf(other.runId) });
    }
    if (bySeed.length > 1) {
      log('\nthe same month with other EM seeds (the default is 0):');
      for (const { seed, evaluation: result, drift: seedDrift } of bySeed) {
        log(
          `  seed ${seed}: k = ${result.k}, ${result.segments} segments, ARI ${result.ari.toFixed(4)}, ` +
            `borderline ${(100 * result.borderlineShare).toFixed(1)} %, queue ${result.queue}` +
            (seedDrift ? `; ${seedDrift.segmentsMostlyStopped} mostly stopped coming, ARI of those who kept coming ${seedDrift.ariKeptComing.toFixed(4)}` : ''),
        );
      }
      const aris = bySeed.map(({ evaluation: result }) => result.ari);
      log(`  ARI mean ${(aris.reduce((a, b) => a + b, 0) / aris.length).toFixed(4)}, range ${Math.min(...aris).toFixed(4)}–${Math.max(...aris).toFixed(4)}`);
    }

    if (values.json) {
      process.stdout.write(
        `${JSON.stringify({ chain, dataDir, asOf, generationSeconds, importSeconds, refreshSeconds, imports, evaluation, drift, sklearnAri: sklearn, levels, bestGrouping: bestGroupingLines, twoFeatures, bySeed })}\n`,
      );
    }
    if (values.keep) log(`\nkept ${work}`);
  } finally {
    if (!values.keep) rmSync(work, { recursive: true, force: true });
  }
}

main().catch((error: unknown) => {
  process.stderr.write(`${error instanceof Error ? error.message : String(error)}\n`);
  process.exit(1);
});
