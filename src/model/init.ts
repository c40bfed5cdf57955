import { emptyStatistics, type SufficientStatistics } from './estep.js';
import type { RandomStream } from './random.js';
import type { InitMethod } from './types.js';

/** k-means stops after this many Lloyd iterations (scikit-learn's KMeans default, from memory). */
const KMEANS_MAX_ITERATIONS = 300;
/** k-means stops when the centers move less than this × the mean feature variance (scikit-learn's default tol, from memory). */
const KMEANS_RELATIVE_TOL = 1e-4;

/**
 * Starting hard assignment of the n × d complete rows in `values` to k components:
 * - 'kmeans': k-means++ seeding then Lloyd's k-means to convergence;
 * - 'kmeans++': k-means++ seeding, each row to its nearest seed;
 * - 'random': k distinct random rows as seeds, each row to its nearest seed.
 * Returns labels (n, 0-based) of which every component holds at least one row when the data
 * has at least k distinct rows.
 */
export function initialLabels(values: Float64Array, n: number, d: number, k: number, method: InitMethod, random: RandomStream): Int32Array {
  const centers = method === 'random' ? randomRows(values, n, d, k, random) : kMeansPlusPlus(values, n, d, k, random);
  const labels = new Int32Array(n);
  const distances = new Float64Array(n);
  assignNearest(values, n, d, centers, k, labels, distances);
  if (method === 'kmeans') lloyd(values, n, d, centers, k, labels, distances);
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

/** Writes each row's nearest center and squared distance; returns whether any label changed. */
function assignNearest(values: Float64Array, n: number, d: number, centers: Float64Array, k: number, labels: Int32Array, distances: Float64Array): boolean {
  let changed = false;
  for (let row = 0; row < n; row++) {
    let best = 0;
    let bestDistance = Infinity;
    for (let c = 0; c < k; c++) {
      const distance = squaredDistance(values, row, centers, c, d);
      if (distance < bestDistance) {
        bestDistance = distance;
        best = c;
      }
    }
    if (labels[row] !== best) changed = true;
    labels[row] = best;
    distances[row] = bestDistance;
  }
  return changed;
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
      let candidatePotential = 0;
      for (let row = 0; row < n; row++) {
        let distance = 0;
        for (let a = 0; a < d; a++) {
          const difference = values[row * d + a] - values[candidate * d + a];
          distance += difference * difference;
        }
        const nearest = distance < closest[row] ? distance : closest[row];
        candidateDistances[row] = nearest;
        candidatePotential += nearest;
      }
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

/** Lloyd iterations; an emptied cluster takes the row farthest from its center. */
function lloyd(values: Float64Array, n: number, d: number, centers: Float64Array, k: number, labels: Int32Array, distances: Float64Array): void {
  const tolerance = KMEANS_RELATIVE_TOL * meanFeatureVariance(values, n, d);
  const sums = new Float64Array(k * d);
  const counts = new Float64Array(k);
  for (let iteration = 0; iteration < KMEANS_MAX_ITERATIONS; iteration++) {
    sums.fill(0);
    counts.fill(0);
    for (let row = 0; row < n; row++) {
      const label = labels[row];
      counts[label]++;
      for (let a = 0; a < d; a++) sums[label * d + a] += values[row * d + a];
    }
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
    const changed = assignNearest(values, n, d, centers, k, labels, distances);
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
 * Sufficient statistics of a hard assignment (τ_ic = 1 for the row's label), shifted by the
 * label means; two passes, so the moments are exact.
 */
export function statisticsFromLabels(values: Float64Array, n: number, d: number, labels: Int32Array, k: number, diagonalOnly: boolean): SufficientStatistics {
  const centers = new Float64Array(k * d);
  const counts = new Float64Array(k);
  for (let row = 0; row < n; row++) {
    const label = labels[row];
    counts[label]++;
    for (let a = 0; a < d; a++) centers[label * d + a] += values[row * d + a];
  }
  for (let c = 0; c < k; c++) if (counts[c] > 0) for (let a = 0; a < d; a++) centers[c * d + a] /= counts[c];
  const statistics = emptyStatistics(k, d, diagonalOnly, centers);
  const dd = d * d;
  for (let row = 0; row < n; row++) {
    const label = labels[row];
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
