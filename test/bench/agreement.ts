/**
 * Adjusted Rand index on a million customers (the refresh's stability figure), side by side with
 * scikit-learn's adjusted_rand_score (Debian's python3-sklearn) on the same labels in the same run.
 *
 *   npx tsx test/bench/agreement.ts [n]
 *
 * Prints both times (best of 5, each side timing only the computation, not reading labels) and
 * the ratio ours / scikit-learn's. Labels: seeded pure-rand, 6 parent × 7 child segments, 80% kept.
 */
import { execFileSync } from 'node:child_process';
import { mkdtempSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { uniformFloat64 } from 'pure-rand/distribution/uniformFloat64';
import { uniformInt } from 'pure-rand/distribution/uniformInt';
import { xoroshiro128plus } from 'pure-rand/generator/xoroshiro128plus';
import { adjustedRandIndex } from '../../src/model/index.js';

const n = Number(process.argv[2] ?? 1_000_000);
const rng = xoroshiro128plus(42);
const parent = new Int32Array(n);
const child = new Int32Array(n);
for (let i = 0; i < n; i++) {
  parent[i] = uniformInt(rng, 0, 5);
  child[i] = uniformFloat64(rng) < 0.8 ? parent[i] : uniformInt(rng, 0, 6);
}

function bestOf<T>(runs: number, work: () => T): { seconds: number; value: T } {
  let seconds = Infinity;
  let value!: T;
  for (let run = 0; run < runs; run++) {
    const start = performance.now();
    value = work();
    seconds = Math.min(seconds, (performance.now() - start) / 1000);
  }
  return { seconds, value };
}

const ours = bestOf(5, () => adjustedRandIndex(parent, child));

const folder = mkdtempSync(join(tmpdir(), 'spendmix-ari-'));
try {
  writeFileSync(join(folder, 'parent.i32'), parent);
  writeFileSync(join(folder, 'child.i32'), child);
  const script = `
import sys, time, numpy as np
from sklearn.metrics import adjusted_rand_score
a = np.fromfile(sys.argv[1], dtype=np.int32); b = np.fromfile(sys.argv[2], dtype=np.int32)
best = float("inf")
for _ in range(5):
    start = time.perf_counter(); value = adjusted_rand_score(a, b); best = min(best, time.perf_counter() - start)
print(best, repr(value))
`;
  const output = execFileSync('/usr/bin/python3', ['-c', script, join(folder, 'parent.i32'), join(folder, 'child.i32')], { encoding: 'utf8' });
  const [theirSeconds, theirValue] = output.trim().split(' ').map(Number);
  console.log(`n = ${n.toLocaleString('en')} labels, 6 × 7 segments`);
  console.log(`ours:         ${ours.seconds.toFixed(4)} s  ARI ${ours.value}`);
  console.log(`scikit-learn: ${theirSeconds.toFixed(4)} s  ARI ${theirValue}`);
  console.log(`ratio ours / scikit-learn: ${(ours.seconds / theirSeconds).toFixed(3)}  (values differ by ${Math.abs(ours.value - theirValue).toExponential(1)})`);
} finally {
  rmSync(folder, { recursive: true, force: true });
}
