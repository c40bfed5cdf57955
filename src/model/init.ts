import { cutTree, sampleRows, type AgglomerationTree } from './agglomeration.js';
import { emptyStatistics, type SufficientStatistics } from './estep.js';
import { compiledKernel, range } from './kernel.js';
import type { RandomStream } from './random.js';
import type { InitMethod, StartMethod } from './types.js';

/** k-means stops after this many Lloyd iterations (scikit-learn's KMeans default, from memory). */
const KMEANS_MAX_ITERATIONS = 300;
/** k-means stops when the centers move less than this × the mean feature variance (scikit-learn's default tol, from memory). */
const KMEANS_RELATIVE_TOL = 1e-4;

/**
 * The start of restart r (0-based) under `init`: the method itself, or for 'mixed' restart 0
 * hierarchical agglomeration (the start mclust uses), then k-means and random partitions in
 * turn, so the restarts differ in kind and not only in their random numbers.
 */
export function startMethodOf(init: InitMethod, restart: number): StartMethod {
  if (init !== 'mixed') return init;
  if (restart === 0) return 'hierarchical';
  return restart % 2 === 1 ? 'kmeans' : 'random-partition';
}

/** Rows per component in the random sample a random partition labels (the rest start unlabelled). */
export const RANDOM_PARTITION_ROWS_PER_COMPONENT = 10;

/**
 * Starting hard assignment of the n × d complete rows in `values` to k components (labels n,
 * 0-based; −1 for a row left out of the start, whose parameters then come from the other rows):
 * - 'kmeans': k-means++ seeding then Lloyd's k-means to convergence;
 * - 'kmeans++': k-means++ seeding, each row to its nearest seed;
 * - 'random': k distinct random rows as seeds, each row to its nearest seed;
 * - 'random-partition': a random sample of RANDOM_PARTITION_ROWS_PER_COMPONENT · k rows split
 *   at random into k groups of (nearly) equal size — a partition of a subsample, so the start
 *   means differ (a partition of all rows would start every component at the overall mean);
 * - 'hierarchical': the agglomeration tree (given; its sample's rows) cut at k groups.
 * Every component holds at least one row when the data have at least k distinct rows.
 */
export function initialLabels(
  values: Float64Array,
  n: number,
  d: number,
  k: number,
  method: StartMethod,
  random: RandomStream,
  tree: () => AgglomerationTree,
): Int32Array {
  if (method === 'hierarchical') return hierarchicalLabels(tree(), n, k);
  if (method === 'random-partition') return randomPartition(n, k, random);
  const centers = method === 'random' ? randomRows(values, n, d, k, random) : kMeansPlusPlus(values, n, d, k, random);
  const state: KMeansState = {
    values,
    n,
    d,
    k,
    centers,
    labels: new Int32Array(n).fill(-1),
    distances: new Float64Array(n),
    sums: new Float64Array(k * d),
    counts: new Float64Array(k),
  };
  assignNearest(state);
  if (method === 'kmeans') lloyd(state);
  return state.labels;
}

function hierarchicalLabels(tree: AgglomerationTree, n: number, k: number): Int32Array {
  const labels = new Int32Array(n).fill(-1);
  const cut = cutTree(tree, k);
  tree.sample.forEach((row, index) => (labels[row] = cut[index]));
  return labels;
}

function randomPartition(n: number, k: number, random: RandomStream): Int32Array {
  const labels = new Int32Array(n).fill(-1);
  // The sample comes in random order, so dealing it out in turn is a random split.
  sampleRows(n, Math.min(n, RANDOM_PARTITION_ROWS_PER_COMPONENT * k), random).forEach((row, index) => (labels[row] = index % k));
  return labels;
}

function squaredDistance(values: Float64Array, row: number, centers: Float64Array, center: number, d: number): number {
  let sum = 0;
  for (let a = 0; a < d; a++) {
    const difference = values[row * d + a] - centers[center * d + a];
    sum += difference * difference;
  }
  return sum;
}

/**
 * One pass over the rows (unrolled for d, see kernel.ts): each row's nearest center and squared
 * distance, the per-center sums and counts of the new assignment (for the next center update),
 * and the number of labels that changed.
 */
type AssignKernel = (
  values: Float64Array,
  n: number,
  centers: Float64Array,
  k: number,
  labels: Int32Array,
  distances: Float64Array,
  sums: Float64Array,
  counts: Float64Array,
) => number;

function assignKernel(d: number): AssignKernel {
  return compiledKernel<AssignKernel>(`assign/${d}`, ['values', 'n', 'centers', 'k', 'labels', 'distances', 'sums', 'counts'], () => {
    const lines = [
      `'use strict';`,
      `let changed = 0;`,
      `sums.fill(0); counts.fill(0);`,
      `for (let row = 0; row < n; row++) {`,
      `  const base = row * ${d};`,
      ...range(d).map((a) => `  const x${a} = values[base + ${a}];`),
      `  let best = 0, bestDistance = Infinity;`,
      `  for (let c = 0; c < k; c++) {`,
      `    const m = c * ${d};`,
      ...range(d).map((a) => `    const e${a} = x${a} - centers[m + ${a}];`),
      `    const distance = ${range(d).map((a) => `e${a} * e${a}`).join(' + ')};`,
      `    if (distance < bestDistance) { bestDistance = distance; best = c; }`,
      `  }`,
      `  if (labels[row] !== best) { changed++; labels[row] = best; }`,
      `  distances[row] = bestDistance;`,
      `  counts[best]++;`,
      ...range(d).map((a) => `  sums[best * ${d} + ${a}] += x${a};`),
      `}`,
      `return changed;`,
    ];
    return lines.join('\n');
  });
}

/**
 * Working arrays of k-means on n × d rows: centers k × d; labels, distances (squared, to the
 * row's center) n; sums k × d and counts k of the current assignment.
 */
interface KMeansState {
  values: Float64Array;
  n: number;
  d: number;
  k: number;
  centers: Float64Array;
  labels: Int32Array;
  distances: Float64Array;
  sums: Float64Array;
  counts: Float64Array;
}

/** Writes each row's nearest center and squared distance (and the new sums and counts); returns whether any label changed. */
function assignNearest(state: KMeansState): boolean {
  const { values, n, d, centers, k, labels, distances, sums, counts } = state;
  return assignKernel(d)(values, n, centers, k, labels, distances, sums, counts) > 0;
}

function randomRows(values: Float64Array, n: number, d: number, k: number, random: RandomStream): Float64Array {
  // Partial Fisher–Yates over row indices: k distinct rows.
  const chosen = new Map<number, number>();
  const centers = new Float64Array(k * d);
  for (let c = 0; c < k; c++) {
    const pick = random.integer(c, n - 1);
    const row = chosen.get(pick) ?? pick;
    chosen.set(pick, chosen.get(c) ?? c);
    centers.set(values.subarray(row * d, row * d + d), c * d);
  }
  return centers;
}

/**
 * Greedy k-means++ (Arthur & Vassilvitskii 2007, with 2 + ⌊ln k⌋ candidates per step as
 * scikit-learn's kmeans_plusplus does, from memory): each new seed is the candidate, drawn with
 * probability ∝ squared distance to the nearest seed so far, that lowers the total the most.
 */
export function kMeansPlusPlus(values: Float64Array, n: number, d: number, k: number, random: RandomStream): Float64Array {
  const centers = new Float64Array(k * d);
  const trials = 2 + Math.floor(Math.log(k));
  const first = random.integer(0, n - 1);
  centers.set(values.subarray(first * d, first * d + d), 0);
  const closest = new Float64Array(n);
  let potential = 0;
  for (let row = 0; row < n; row++) {
    closest[row] = squaredDistance(values, row, centers, 0, d);
    potential += closest[row];
  }
  const cumulative = new Float64Array(n);
  const candidateDistances = new Float64Array(n);
  const bestDistances = new Float64Array(n);
  for (let c = 1; c < k; c++) {
    let running = 0;
    for (let row = 0; row < n; row++) {
      running += closest[row];
      cumulative[row] = running;
    }
    let bestCandidate = -1;
    let bestPotential = Infinity;
    for (let trial = 0; trial < trials; trial++) {
      const target = random.float() * running;
      const candidate = potential > 0 ? searchSorted(cumulative, target) : random.integer(0, n - 1);
      const candidatePotential = candidateKernel(d)(values, n, candidate, closest, candidateDistances);
      if (candidatePotential < bestPotential) {
        bestPotential = candidatePotential;
        bestCandidate = candidate;
        bestDistances.set(candidateDistances);
      }
    }
    centers.set(values.subarray(bestCandidate * d, bestCandidate * d + d), c * d);
    closest.set(bestDistances);
    potential = bestPotential;
  }
  return centers;
}

/** Squared distance of every row to the nearest of (its closest seed, the candidate row); returns their sum. */
type CandidateKernel = (values: Float64Array, n: number, candidate: number, closest: Float64Array, candidateDistances: Float64Array) => number;

function candidateKernel(d: number): CandidateKernel {
  return compiledKernel<CandidateKernel>(`candidate/${d}`, ['values', 'n', 'candidate', 'closest', 'candidateDistances'], () =>
    [
      `'use strict';`,
      ...range(d).map((a) => `const y${a} = values[candidate * ${d} + ${a}];`),
      `let potential = 0;`,
      `for (let row = 0; row < n; row++) {`,
      `  const base = row * ${d};`,
      ...range(d).map((a) => `  const e${a} = values[base + ${a}] - y${a};`),
      `  const distance = ${range(d).map((a) => `e${a} * e${a}`).join(' + ')};`,
      `  const nearest = distance < closest[row] ? distance : closest[row];`,
      `  candidateDistances[row] = nearest;`,
      `  potential += nearest;`,
      `}`,
      `return potential;`,
    ].join('\n'),
  );
}

/** First index whose cumulative value exceeds target (rows with zero weight are never picked). */
function searchSorted(cumulative: Float64Array, target: number): number {
  let low = 0;
  let high = cumulative.length - 1;
  while (low < high) {
    const middle = (low + high) >>> 1;
    if (cumulative[middle] > target) high = middle;
    else low = middle + 1;
  }
  return low;
}

/** Lloyd iterations from the sums and counts of the current assignment; an emptied cluster takes the row farthest from its center. */
function lloyd(state: KMeansState): void {
  const { values, n, d, centers, k, distances, sums, counts } = state;
  const tolerance = KMEANS_RELATIVE_TOL * meanFeatureVariance(values, n, d);
  for (let iteration = 0; iteration < KMEANS_MAX_ITERATIONS; iteration++) {
    let shift = 0;
    for (let c = 0; c < k; c++) {
      if (counts[c] === 0) {
        const far = farthestRow(distances);
        distances[far] = 0;
        for (let a = 0; a < d; a++) {
          const difference = values[far * d + a] - centers[c * d + a];
          shift += difference * difference;
          centers[c * d + a] = values[far * d + a];
        }
        continue;
      }
      for (let a = 0; a < d; a++) {
        const updated = sums[c * d + a] / counts[c];
        const difference = updated - centers[c * d + a];
        shift += difference * difference;
        centers[c * d + a] = updated;
      }
    }
    const changed = assignNearest(state);
    if (!changed || shift <= tolerance) return;
  }
}

function farthestRow(distances: Float64Array): number {
  let far = 0;
  for (let row = 1; row < distances.length; row++) if (distances[row] > distances[far]) far = row;
  return far;
}

function meanFeatureVariance(values: Float64Array, n: number, d: number): number {
  let total = 0;
  for (let a = 0; a < d; a++) {
    let mean = 0;
    for (let row = 0; row < n; row++) mean += values[row * d + a];
    mean /= n;
    let sum = 0;
    for (let row = 0; row < n; row++) {
      const difference = values[row * d + a] - mean;
      sum += difference * difference;
    }
    total += sum / n;
  }
  return total / d;
}

/**
 * Sufficient statistics of a hard assignment (τ_ic = 1 for the row's label; rows labelled −1
 * left out), shifted by the label means; two passes, so the moments are exact.
 */
export function statisticsFromLabels(values: Float64Array, n: number, d: number, labels: Int32Array, k: number, diagonalOnly: boolean): SufficientStatistics {
  const centers = new Float64Array(k * d);
  const counts = new Float64Array(k);
  for (let row = 0; row < n; row++) {
    const label = labels[row];
    if (label < 0) continue;
    counts[label]++;
    for (let a = 0; a < d; a++) centers[label * d + a] += values[row * d + a];
  }
  for (let c = 0; c < k; c++) if (counts[c] > 0) for (let a = 0; a < d; a++) centers[c * d + a] /= counts[c];
  const statistics = emptyStatistics(k, d, diagonalOnly, centers);
  const dd = d * d;
  for (let row = 0; row < n; row++) {
    const label = labels[row];
    if (label < 0) continue;
    statistics.weightSums[label]++;
    for (let a = 0; a < d; a++) {
      const differenceA = values[row * d + a] - centers[label * d + a];
      statistics.firstMoments[label * d + a] += differenceA;
      for (let b = diagonalOnly ? a : 0; b <= a; b++) {
        statistics.secondMoments[label * dd + a * d + b] += differenceA * (values[row * d + b] - centers[label * d + b]);
      }
    }
  }
  return statistics;
}
