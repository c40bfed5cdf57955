/**
 * Shared by the mixture benchmarks: the seeded test mixture, running a side under
 * `/usr/bin/time -v` for its peak memory, and the scikit-learn side's environment.
 */
import { execFileSync, spawnSync } from 'node:child_process';
import { writeFileSync } from 'node:fs';
import { fileURLToPath } from 'node:url';
import { restartStream } from '../../src/model/index.js';

export const root = fileURLToPath(new URL('../..', import.meta.url));
export const pythonSide = fileURLToPath(new URL('./em-vs-sklearn.py', import.meta.url));

/**
 * n rows of a seeded d-dimensional mixture of k Gaussians with unequal weights, well-separated
 * means and random full covariances (A Aᵀ + 0.1 I); row-major Float64Array.
 */
export function seededMixture(n: number, d: number, k: number, seed: number): Float64Array {
  const random = restartStream(seed, 0);
  const normal = () => {
    const u = 1 - random.float();
    return Math.sqrt(-2 * Math.log(u)) * Math.cos(2 * Math.PI * random.float());
  };
  const means = Array.from({ length: k }, () => Array.from({ length: d }, () => normal() * 4));
  const factors = Array.from({ length: k }, () => Array.from({ length: d * d }, () => normal() * 0.8));
  const weights = Array.from({ length: k }, (_, c) => k - c);
  const total = weights.reduce((sum, weight) => sum + weight, 0);
  const cumulative = weights.map((_, c) => weights.slice(0, c + 1).reduce((sum, weight) => sum + weight, 0) / total);
  const values = new Float64Array(n * d);
  const z = new Float64Array(d);
  for (let row = 0; row < n; row++) {
    const u = random.float();
    let c = 0;
    while (c < k - 1 && u >= cumulative[c]) c++;
    for (let a = 0; a < d; a++) z[a] = normal();
    for (let a = 0; a < d; a++) {
      let value = means[c][a] + Math.sqrt(0.1) * normal();
      for (let b = 0; b < d; b++) value += factors[c][a * d + b] * z[b];
      values[row * d + a] = value;
    }
  }
  return values;
}

export function writeMatrix(path: string, values: Float64Array): void {
  writeFileSync(path, Buffer.from(values.buffer, values.byteOffset, values.byteLength));
}

/** The environment for numpy: OPENBLAS_CORETYPE / OPENBLAS_L2_SIZE removed (they can slow OpenBLAS here). */
export function pythonEnvironment(): NodeJS.ProcessEnv {
  const environment = { ...process.env };
  delete environment.OPENBLAS_CORETYPE;
  delete environment.OPENBLAS_L2_SIZE;
  return environment;
}

export interface TimedRun {
  /** The JSON object the side printed on stdout. */
  result: Record<string, unknown>;
  /** Peak resident memory in MB from /usr/bin/time -v. */
  peakMegabytes: number;
  /** Wall time of the whole process, s. */
  processSeconds: number;
}

/** Runs a command under /usr/bin/time -v and returns its JSON output and peak memory. */
export function runTimed(command: string, args: string[], environment: NodeJS.ProcessEnv = process.env): TimedRun {
  const started = performance.now();
  const child = spawnSync('/usr/bin/time', ['-v', command, ...args], { cwd: root, env: environment, encoding: 'utf8', maxBuffer: 64 * 1024 * 1024 });
  const processSeconds = (performance.now() - started) / 1000;
  if (child.status !== 0) throw new Error(`${command} ${args.join(' ')} failed (${child.status}):\n${child.stderr}`);
  const rss = /Maximum resident set size \(kbytes\): (\d+)/.exec(child.stderr);
  const lastLine = child.stdout.trim().split('\n').at(-1) ?? '{}';
  return { result: JSON.parse(lastLine), peakMegabytes: rss ? Number(rss[1]) / 1024 : NaN, processSeconds };
}

/** Node, run on a TypeScript file through tsx, as the benchmarks' "ours" side. */
export function nodeTsArgs(file: string, args: string[]): string[] {
  return ['--import', 'tsx', file, ...args];
}

export function machineLine(): string {
  const load = execFileSync('cat', ['/proc/loadavg'], { encoding: 'utf8' }).trim().split(' ').slice(0, 3).join(' ');
  return `machine: ${process.arch}, Node ${process.version}, load average ${load}`;
}
