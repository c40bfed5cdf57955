/**
 * The E-step row loop, specialised for one dimension d by generating its source with every
 * feature loop unrolled (x0…x{d−1} in locals, the triangular solve written out), then compiled
 * once per shape with `new Function` and cached. Profiling showed the generic loop nest spent
 * most of its time on loop control and array reads for small d; the unrolled form keeps the row
 * in registers. The generated code depends only on integers (d and flags), never on data.
 */

/** Which M-step statistics the pass accumulates. */
export type StatisticsMode = 'none' | 'diagonal' | 'full';

export interface KernelShape {
  dimensions: number;
  /** Lower-triangular factors (full, tied) rather than per-feature inverse deviations (diag, spherical). */
  triangular: boolean;
  statistics: StatisticsMode;
  /** Write posteriors (n × k) at each row's offset. */
  posteriors: boolean;
}

/**
 * Arguments, all row-major: values n × d; logConstants k; means k × d; factors k × d × d
 * (triangular) or k × d; weightSums k; firstMoments k × d; secondMoments k × d × d (lower
 * triangle); posteriors n × k; summary 4 (out: Σ log density, Σ log max posterior, worst row,
 * worst log density). Unused outputs may be empty arrays.
 */
export type ExpectationKernel = (
  values: Float64Array,
  rowStart: number,
  rowEnd: number,
  k: number,
  logConstants: Float64Array,
  means: Float64Array,
  factors: Float64Array,
  weightSums: Float64Array,
  firstMoments: Float64Array,
  secondMoments: Float64Array,
  posteriors: Float64Array,
  summary: Float64Array,
) => void;

const cache = new Map<string, unknown>();

/** Compiles generated source once per key (the source depends only on integers and flags). */
export function compiledKernel<T>(key: string, parameters: string[], source: () => string): T {
  let kernel = cache.get(key);
  if (!kernel) {
    kernel = new Function(...parameters, source());
    cache.set(key, kernel);
  }
  return kernel as T;
}

export function expectationKernel(shape: KernelShape): ExpectationKernel {
  return compiledKernel<ExpectationKernel>(
    `estep/${shape.dimensions}/${shape.triangular}/${shape.statistics}/${shape.posteriors}`,
    ['values', 'rowStart', 'rowEnd', 'k', 'logConstants', 'means', 'factors', 'weightSums', 'firstMoments', 'secondMoments', 'posteriors', 'summary'],
    () => kernelSource(shape),
  );
}

export const range = (count: number) => Array.from({ length: count }, (_, index) => index);

/** Rows per block: responsibilities of a block are computed first, then its statistics per component. */
export const KERNEL_BLOCK_ROWS = 256;

/**
 * Source of the kernel body for one shape (exported so a test can read what runs). Rows go in
 * blocks: pass 1 computes every row's component log densities, log-sum-exp and responsibilities
 * into a small buffer; pass 2 walks the block once per component with the statistics in local
 * variables (registers, no read-modify-write through memory per row) and adds them at the end.
 */
export function kernelSource({ dimensions: d, triangular, statistics, posteriors }: KernelShape): string {
  const dd = d * d;
  const lines: string[] = [];
  const emit = (line: string) => lines.push(line);
  const pairs = range(d).flatMap((a) => range(a + 1).map((b) => [a, b] as const)).filter(([a, b]) => statistics === 'full' || a === b);
  emit(`'use strict';`);
  emit(`const BLOCK = ${KERNEL_BLOCK_ROWS};`);
  emit(`const densities = new Float64Array(k);`);
  emit(`const responsibilities = new Float64Array(BLOCK * k);`);
  emit(`let logLikelihood = 0, sumLogMaxPosterior = 0, worstRow = -1, worstLogDensity = Infinity;`);
  emit(`for (let blockStart = rowStart; blockStart < rowEnd; blockStart += BLOCK) {`);
  emit(`  const blockEnd = Math.min(blockStart + BLOCK, rowEnd);`);
  emit(`  for (let row = blockStart; row < blockEnd; row++) {`);
  emit(`    const base = row * ${d};`);
  for (const a of range(d)) emit(`    const x${a} = values[base + ${a}];`);
  emit(`    let best = -Infinity, bestComponent = 0;`);
  emit(`    for (let c = 0; c < k; c++) {`);
  emit(`      const m = c * ${d};`);
  emit(`      const f = c * ${triangular ? dd : d};`);
  for (const a of range(d)) emit(`      const e${a} = x${a} - means[m + ${a}];`);
  if (triangular) {
    for (const a of range(d)) emit(`      const p${a} = ${range(a + 1).map((b) => `factors[f + ${a * d + b}] * e${b}`).join(' + ')};`);
  } else {
    for (const a of range(d)) emit(`      const p${a} = factors[f + ${a}] * e${a};`);
  }
  emit(`      const density = logConstants[c] - 0.5 * (${range(d).map((a) => `p${a} * p${a}`).join(' + ')});`);
  emit(`      densities[c] = density;`);
  emit(`      if (density > best) { best = density; bestComponent = c; }`);
  emit(`    }`);
  emit(`    let total = 0;`);
  // exp(0) is exactly 1, so the top component skips its exp without changing a bit.
  emit(`    for (let c = 0; c < k; c++) { const scaled = c === bestComponent ? 1 : Math.exp(densities[c] - best); densities[c] = scaled; total += scaled; }`);
  emit(`    const logTotal = Math.log(total);`);
  emit(`    const rowLogDensity = best + logTotal;`);
  emit(`    logLikelihood += rowLogDensity;`);
  emit(`    sumLogMaxPosterior -= logTotal;`); // the top component's scaled value is exactly 1
  emit(`    if (rowLogDensity < worstLogDensity) { worstLogDensity = rowLogDensity; worstRow = row; }`);
  emit(`    const inverseTotal = 1 / total;`);
  emit(`    const offset = (row - blockStart) * k;`);
  emit(`    for (let c = 0; c < k; c++) responsibilities[offset + c] = densities[c] * inverseTotal;`);
  if (posteriors) emit(`    for (let c = 0; c < k; c++) posteriors[row * k + c] = responsibilities[offset + c];`);
  emit(`  }`);
  if (statistics !== 'none') {
    emit(`  for (let c = 0; c < k; c++) {`);
    emit(`    const m = c * ${d};`);
    emit(`    const s = c * ${dd};`);
    for (const a of range(d)) emit(`    const mu${a} = means[m + ${a}];`);
    emit(`    let w = 0;`);
    for (const a of range(d)) emit(`    let f${a} = 0;`);
    for (const [a, b] of pairs) emit(`    let s${a}_${b} = 0;`);
    emit(`    for (let row = blockStart; row < blockEnd; row++) {`);
    emit(`      const responsibility = responsibilities[(row - blockStart) * k + c];`);
    emit(`      if (responsibility === 0) continue;`);
    emit(`      const base = row * ${d};`);
    emit(`      w += responsibility;`);
    for (const a of range(d)) emit(`      const e${a} = values[base + ${a}] - mu${a}; const r${a} = responsibility * e${a}; f${a} += r${a};`);
    for (const [a, b] of pairs) emit(`      s${a}_${b} += r${a} * e${b};`);
    emit(`    }`);
    emit(`    weightSums[c] += w;`);
    for (const a of range(d)) emit(`    firstMoments[m + ${a}] += f${a};`);
    for (const [a, b] of pairs) emit(`    secondMoments[s + ${a * d + b}] += s${a}_${b};`);
    emit(`  }`);
  }
  emit(`}`);
  emit(`summary[0] = logLikelihood; summary[1] = sumLogMaxPosterior; summary[2] = worstRow; summary[3] = worstLogDensity;`);
  return lines.join('\n');
}
