/**
 * A model-selection sweep, k = 1…8 × the four covariance structures, one start each (k-means
 * initialisation, tol 1e-3, at most 200 iterations, regularisation 1e-6), on 50,000 seeded rows
 * (d = 4): ours (sweepMixtures on worker threads) against scikit-learn's GaussianMixture fitting
 * the same grid one cell after another, in the same run. Each side runs in its own process
 * under /usr/bin/time -v and times its sweep alone.
 *
 *   npx tsx test/bench/sweep-vs-sklearn.ts [--rows N] [--k-max N] [--threads N] [--init M] [--restarts N]
 *
 * --init and --restarts change our side only (default kmeans and 1, as scikit-learn runs): with
 * --init mixed --restarts 5 (the app's defaults) the ratio shows what the varied starts cost.
 * Prints both sweep times and the ratio ours / scikit-learn, total EM iterations on each side
 * (the two k-means starts differ, so iteration counts differ), peak memory, and both BIC winners.
 */
import { mkdtempSync, readFileSync, rmSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { fileURLToPath } from 'node:url';
import { covarianceTypes, sweepMixtures, type InitMethod } from '../../src/model/index.js';
import { machineLine, nodeTsArgs, pythonEnvironment, pythonSide, runTimed, seededMixture, writeMatrix } from './em-vs-sklearn.support.js';

function option(name: string, fallback: string): string {
  const index = process.argv.indexOf(name);
  return index >= 0 ? process.argv[index + 1] : fallback;
}

const d = 4;
const MAX_ITERATIONS = 200;
const TOL = 1e-3;

interface Cell {
  k: number;
  covariance: string;
  iterations: number;
  bic: number;
}

async function child(path: string, rows: number, kMax: number, threads: number | undefined, init: InitMethod, restarts: number): Promise<void> {
  const values = new Float64Array(readFileSync(path).buffer.slice(0));
  const started = performance.now();
  const sweep = await sweepMixtures(
    { values, rows, cols: d },
    { componentRange: [1, kMax], covarianceTypes, restarts, seed: 0, tol: TOL, maxIterations: MAX_ITERATIONS, regularization: 1e-6, init, criterion: 'bic', threads },
  );
  const seconds = (performance.now() - started) / 1000;
  const cells: Cell[] = sweep.table.map((row) => ({ k: row.k, covariance: row.covariance, iterations: row.iterations, bic: row.bic }));
  console.log(JSON.stringify({ seconds, cells }));
}

function winner(cells: Cell[]): string {
  const best = cells.reduce((a, b) => (b.bic < a.bic ? b : a));
  return `${best.covariance} k = ${best.k} (BIC ${best.bic.toFixed(1)})`;
}

async function main(): Promise<void> {
  const rows = Number(option('--rows', '50000'));
  const kMax = Number(option('--k-max', '8'));
  const threadsText = option('--threads', '');
  const init = option('--init', 'kmeans') as InitMethod;
  const restarts = Number(option('--restarts', '1'));
  if (process.argv[2] === '--child') {
    await child(process.argv[3], rows, kMax, threadsText ? Number(threadsText) : undefined, init, restarts);
    return;
  }
  const folder = mkdtempSync(join(tmpdir(), 'spendmix-sweep-bench-'));
  try {
    const path = join(folder, 'mixture.f64');
    writeMatrix(path, seededMixture(rows, d, 4, 2027));
    console.log(machineLine());
    console.log(
      `data: seeded 4-group mixture, n = ${rows.toLocaleString('en')}, d = ${d}; grid k = 1…${kMax} × ${covarianceTypes.join(', ')}; ` +
        `ours ${restarts} start(s) ${init}, scikit-learn 1 start k-means; tol ${TOL}, ≤ ${MAX_ITERATIONS} iterations`,
    );
    const passOn = ['--rows', String(rows), '--k-max', String(kMax), '--init', init, '--restarts', String(restarts), ...(threadsText ? ['--threads', threadsText] : [])];
    const ours = runTimed(process.execPath, nodeTsArgs(fileURLToPath(import.meta.url), ['--child', path, ...passOn]));
    const theirs = runTimed('/usr/bin/python3', [pythonSide, 'sweep', path, String(rows), String(d), String(kMax), 'kmeans', String(MAX_ITERATIONS), String(TOL)], pythonEnvironment());
    const o = ours.result as { seconds: number; cells: Cell[] };
    const t = theirs.result as { seconds: number; cells: Cell[]; kernels: unknown[] };
    const iterations = (cells: Cell[]) => cells.reduce((sum, cell) => sum + cell.iterations, 0);
    console.log(`ours (worker threads): ${o.seconds.toFixed(2)} s for ${o.cells.length} fits, ${iterations(o.cells)} EM iterations in all, peak ${ours.peakMegabytes.toFixed(0)} MB; BIC winner ${winner(o.cells)}`);
    console.log(`scikit-learn (one after another): ${t.seconds.toFixed(2)} s for ${t.cells.length} fits, ${iterations(t.cells)} EM iterations in all, peak ${theirs.peakMegabytes.toFixed(0)} MB; BIC winner ${winner(t.cells)}`);
    console.log(`scikit-learn kernels (threadpoolctl, OPENBLAS_CORETYPE/OPENBLAS_L2_SIZE unset): ${JSON.stringify(t.kernels)}`);
    const perIteration = o.seconds / iterations(o.cells) / (t.seconds / iterations(t.cells));
    console.log(`ratio ours / scikit-learn: sweep time ${(o.seconds / t.seconds).toFixed(3)}  (required ≤ 0.5, aim ≤ 0.25); per EM iteration ${perIteration.toFixed(3)}`);
  } finally {
    rmSync(folder, { recursive: true, force: true });
  }
}

await main();
