/**
 * EM on n = 1,000,000, d = 4, k = 4, full covariance, exactly 100 iterations (tol 0, one start,
 * k-means initialisation on both sides), ours against scikit-learn's GaussianMixture (Debian's
 * python3-sklearn) on the same seeded data in the same run. Each side runs in its own process
 * under /usr/bin/time -v for its peak memory and times its fit alone.
 *
 *   npx tsx test/bench/em-vs-sklearn.ts [--rows N] [--iterations N] [--covariance S] [--threads N] [--repeat N] [--init M]
 *
 * --init chooses our start (default kmeans, as scikit-learn's; e.g. --init hierarchical shows
 * what the agglomeration start costs in the "init ≈" figure); scikit-learn always starts from
 * k-means.
 * With --repeat N the two sides alternate N times (ours, theirs, ours, …) so a change of load on
 * this shared machine hits both; every round's ratio is printed, then the ratio of the best times.
 * Prints both fit times, seconds per iteration (ours from progress stamps; scikit-learn's as
 * (T(100 iterations) − T(1 iteration)) / 99), the ratio ours / scikit-learn, peak memory, the
 * BLAS kernel threadpoolctl reports for numpy, and both log-likelihoods.
 */
import { mkdtempSync, readFileSync, rmSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { fileURLToPath } from 'node:url';
import { fitMixtureParallel, type CovarianceType, type InitMethod } from '../../src/model/index.js';
import { machineLine, nodeTsArgs, pythonEnvironment, pythonSide, runTimed, seededMixture, writeMatrix } from './em-vs-sklearn.support.js';

function option(name: string, fallback: string): string {
  const index = process.argv.indexOf(name);
  return index >= 0 ? process.argv[index + 1] : fallback;
}

const d = 4;
const k = 4;

async function child(path: string, rows: number, iterations: number, covarianceType: CovarianceType, threads: number | undefined, init: InitMethod): Promise<void> {
  const values = new Float64Array(readFileSync(path).buffer.slice(0));
  const stamps: number[] = [];
  const started = performance.now();
  const fit = await fitMixtureParallel(
    { values, rows, cols: d },
    // scikit-learn's settings: reg_covar 1e-6, random_state 0 (em-vs-sklearn.py).
    { components: k, covarianceType, restarts: 1, seed: 0, tol: 0, maxIterations: iterations, regularization: 1e-6, init, threads, onProgress: () => stamps.push(performance.now()) },
  );
  const seconds = (performance.now() - started) / 1000;
  const perIteration = (stamps[stamps.length - 1] - stamps[1]) / 1000 / (stamps.length - 2);
  console.log(JSON.stringify({ seconds, perIteration, initSeconds: (stamps[1] - started) / 1000 - perIteration, iterations: fit.iterations, logLikelihood: fit.logLikelihood }));
}

async function main(): Promise<void> {
  const rows = Number(option('--rows', '1000000'));
  const iterations = Number(option('--iterations', '100'));
  const covarianceType = option('--covariance', 'full') as CovarianceType;
  const threadsText = option('--threads', '');
  const init = option('--init', 'kmeans') as InitMethod;
  if (process.argv[2] === '--child') {
    await child(process.argv[3], rows, iterations, covarianceType, threadsText ? Number(threadsText) : undefined, init);
    return;
  }
  const folder = mkdtempSync(join(tmpdir(), 'spendmix-em-bench-'));
  try {
    const path = join(folder, 'mixture.f64');
    writeMatrix(path, seededMixture(rows, d, k, 2026));
    console.log(machineLine());
    console.log(`data: seeded mixture, n = ${rows.toLocaleString('en')}, d = ${d}, k = ${k}; ${covarianceType} covariance, init: ours ${init}, scikit-learn kmeans; 1 start, ${iterations} iterations, tol 0`);
    const passOn = ['--rows', String(rows), '--iterations', String(iterations), '--covariance', covarianceType, '--init', init, ...(threadsText ? ['--threads', threadsText] : [])];
    const repeat = Number(option('--repeat', '1'));
    type Ours = { seconds: number; perIteration: number; initSeconds: number; iterations: number; logLikelihood: number };
    type Theirs = { seconds: number; oneIterationSeconds: number; iterations: number; logLikelihood: number; kernels: unknown[] };
    const rounds: { o: Ours; t: Theirs; oursPeak: number; theirPeak: number }[] = [];
    for (let round = 1; round <= repeat; round++) {
      const ours = runTimed(process.execPath, nodeTsArgs(fileURLToPath(import.meta.url), ['--child', path, ...passOn]));
      const theirs = runTimed('/usr/bin/python3', [pythonSide, 'fit', path, String(rows), String(d), String(k), covarianceType, 'kmeans', String(iterations), '0'], pythonEnvironment());
      const o = ours.result as Ours;
      const t = theirs.result as Theirs;
      rounds.push({ o, t, oursPeak: ours.peakMegabytes, theirPeak: theirs.peakMegabytes });
      const theirPerIteration = (t.seconds - t.oneIterationSeconds) / (iterations - 1);
      console.log(`round ${round} of ${repeat}`);
      console.log(`  ours:         fit ${o.seconds.toFixed(2)} s (${o.iterations} iterations, ${o.perIteration.toFixed(4)} s/iteration, init ≈ ${o.initSeconds.toFixed(2)} s), peak ${ours.peakMegabytes.toFixed(0)} MB, log L ${o.logLikelihood.toFixed(3)}`);
      console.log(`  scikit-learn: fit ${t.seconds.toFixed(2)} s (${t.iterations} iterations, ${theirPerIteration.toFixed(4)} s/iteration, init + 1 iteration ${t.oneIterationSeconds.toFixed(2)} s), peak ${theirs.peakMegabytes.toFixed(0)} MB, log L ${t.logLikelihood.toFixed(3)}`);
      console.log(`  ratio ours / scikit-learn: fit time ${(o.seconds / t.seconds).toFixed(3)}, per iteration ${(o.perIteration / theirPerIteration).toFixed(3)}`);
    }
    console.log(`scikit-learn kernels (threadpoolctl, OPENBLAS_CORETYPE/OPENBLAS_L2_SIZE unset): ${JSON.stringify(rounds[0].t.kernels)}`);
    const bestOurs = Math.min(...rounds.map((entry) => entry.o.seconds));
    const bestTheirs = Math.min(...rounds.map((entry) => entry.t.seconds));
    console.log(`ratio ours / scikit-learn, best fit times of ${repeat} round(s): ${(bestOurs / bestTheirs).toFixed(3)} (${bestOurs.toFixed(2)} s / ${bestTheirs.toFixed(2)} s)  (required ≤ 1.0, aim ≤ 0.5)`);
  } finally {
    rmSync(folder, { recursive: true, force: true });
  }
}

await main();
