/**
 * Model-based hierarchical agglomeration (Banfield & Raftery 1993; Fraley 1998, "Algorithms for
 * model-based Gaussian hierarchical clustering", SIAM J. Sci. Comput. 20(1), 270–281): starting
 * from one group per distinct row, repeatedly merge the two groups whose merge lowers the
 * classification likelihood of the unconstrained (full-covariance) Gaussian model the least.
 * mclust starts EM from this tree by default (mclust.options("hcModelName") = "VVV", on data
 * transformed by hcUse = "SVD", checked in R with Debian's r-cran-mclust 6.0.0).
 *
 * The criterion of a group of n rows with scatter W (d × d) and t = tr W is Fraley's
 * regularised form of n log|W/n|, which stays finite for groups too small for |W| > 0:
 *   n ≤ d:          n log((t + α)/n)
 *   n > d, t = 0:   n log(α/n)
 *   n > d:          n log(|W/n| + (t + α)/n)      (the first form again when W is singular)
 * with α = tr(W_all)/(m·d), W_all the scatter of all m rows (mclust's hcVVV with alpha = beta = 1,
 * as its documentation and Fraley 1998 describe them). Merging costs the criterion of the union
 * less those of the parts; ties go to the lower-numbered group.
 *
 * Time O(m² d³) and memory O(m²) for m rows, so large data run on a seeded sample of
 * AGGLOMERATION_SAMPLE rows (mclust.options("subset") is 2000 too) and EM starts from the
 * parameters of the sample's partition.
 */
import { choleskyInPlace, logDiagonalSum, symmetricEigen } from './gaussian.js';
import type { RandomStream } from './random.js';

/** Rows the agglomeration runs on at most; larger data are sampled down to this many (seeded). */
export const AGGLOMERATION_SAMPLE = 2000;

/**
 * A merge tree over the rows `sample` (ascending row indices of the data):
 * - initialGroups: sample.length, each row's starting group (equal rows share one), 0 … groups−1;
 * - merges: (groups − 1) × 2, the groups joined at each step in order; the union keeps the first.
 */
export interface AgglomerationTree {
  sample: Int32Array;
  groups: number;
  initialGroups: Int32Array;
  merges: Int32Array;
}

/** min(count, n) distinct rows of n drawn with the stream, in the order drawn. */
export function sampleRows(n: number, count: number, random: RandomStream): Int32Array {
  count = Math.min(count, n);
  const chosen = new Map<number, number>();
  const rows = new Int32Array(count);
  for (let i = 0; i < count; i++) {
    // Partial Fisher–Yates over row indices.
    const pick = random.integer(i, n - 1);
    rows[i] = chosen.get(pick) ?? pick;
    chosen.set(pick, chosen.get(i) ?? i);
  }
  return rows;
}

/**
 * The rows `sample` of the n × d `values` in mclust's "SVD" scaling: each feature centred and
 * divided by its standard deviation (denominator m − 1), then Z = B V D^(-1/2) for the singular
 * value decomposition B = U D Vᵀ (so Z = U D^(1/2)); returned m × d, row-major.
 */
export function svdScaled(values: Float64Array, d: number, sample: Int32Array): Float64Array {
  const m = sample.length;
  const standardized = new Float64Array(m * d);
  for (let a = 0; a < d; a++) {
    let mean = 0;
    for (let i = 0; i < m; i++) mean += values[sample[i] * d + a];
    mean /= m;
    let squares = 0;
    for (let i = 0; i < m; i++) squares += (values[sample[i] * d + a] - mean) ** 2;
    const deviation = Math.sqrt(squares / Math.max(1, m - 1)) || 1;
    for (let i = 0; i < m; i++) standardized[i * d + a] = (values[sample[i] * d + a] - mean) / deviation;
  }
  // Bᵀ B = V D² Vᵀ: its eigenvectors are V and the square roots of its eigenvalues are D.
  const gram = new Float64Array(d * d);
  for (let i = 0; i < m; i++) {
    for (let a = 0; a < d; a++) for (let b = 0; b <= a; b++) gram[a * d + b] += standardized[i * d + a] * standardized[i * d + b];
  }
  const { values: eigenvalues, vectors } = symmetricEigen(gram, 0, d);
  const largest = Math.max(eigenvalues[d - 1], Number.MIN_VALUE);
  // D^(-1/2) = (D²)^(-1/4); a direction with no spread (collinear features) is floored, not divided by 0.
  const scales = eigenvalues.map((value) => Math.max(value, 1e-12 * largest) ** -0.25);
  const scaled = new Float64Array(m * d);
  for (let i = 0; i < m; i++) {
    for (let column = 0; column < d; column++) {
      let sum = 0;
      for (let a = 0; a < d; a++) sum += standardized[i * d + a] * vectors[a * d + column];
      scaled[i * d + column] = sum * scales[column];
    }
  }
  return scaled;
}

/** Groups of equal rows (in order of first appearance) of the m × d rows. */
function duplicateGroups(rows: Float64Array, m: number, d: number): { groups: number; initialGroups: Int32Array } {
  const byKey = new Map<string, number>();
  const initialGroups = new Int32Array(m);
  const bytes = new Uint8Array(rows.buffer, rows.byteOffset, rows.byteLength);
  for (let i = 0; i < m; i++) {
    const key = Buffer.from(bytes.subarray(i * d * 8, (i + 1) * d * 8)).toString('latin1');
    let group = byKey.get(key);
    if (group === undefined) byKey.set(key, (group = byKey.size));
    initialGroups[i] = group;
  }
  return { groups: byKey.size, initialGroups };
}

/**
 * The agglomeration tree of the rows `sample` of the n × d `values` (all rows when the sample
 * holds them all), after the SVD scaling.
 */
export function agglomerate(values: Float64Array, d: number, sample: Int32Array): AgglomerationTree {
  const m = sample.length;
  const rows = svdScaled(values, d, sample);
  const { groups, initialGroups } = duplicateGroups(rows, m, d);
  const state = new MergeState(rows, m, d, groups, initialGroups);
  return { sample, groups, initialGroups, merges: state.mergeAll() };
}

/**
 * Labels (0 … k'−1, k' = min(k, groups)) of the sample's rows after all but k' − 1 … of the
 * merges: the partition of the tree at k groups.
 */
export function cutTree(tree: AgglomerationTree, k: number): Int32Array {
  const parent = Int32Array.from({ length: tree.groups }, (_, group) => group);
  const root = (group: number): number => {
    while (parent[group] !== group) group = parent[group] = parent[parent[group]];
    return group;
  };
  const steps = Math.max(0, tree.groups - k);
  for (let step = 0; step < steps; step++) parent[root(tree.merges[2 * step + 1])] = root(tree.merges[2 * step]);
  const labelOf = new Map<number, number>();
  return tree.initialGroups.map((group) => {
    const top = root(group);
    let label = labelOf.get(top);
    if (label === undefined) labelOf.set(top, (label = labelOf.size));
    return label;
  });
}

/**
 * Working state of the agglomeration: per group its size, mean (d), scatter (d × d, lower
 * triangle), trace and criterion; the merge cost of every pair of live groups (groups × groups,
 * both halves, so that a group's costs are read in one sweep of memory); each live group's
 * cheapest partner.
 */
class MergeState {
  private readonly sizes: Float64Array;
  private readonly means: Float64Array;
  private readonly scatters: Float64Array;
  private readonly traces: Float64Array;
  private readonly terms: Float64Array;
  private readonly costs: Float64Array;
  private readonly alive: Uint8Array;
  private readonly partner: Int32Array;
  private readonly partnerCost: Float64Array;
  private readonly alpha: number;
  private readonly work: Float64Array;
  private unionTrace = 0;

  constructor(
    rows: Float64Array,
    m: number,
    private readonly d: number,
    private readonly groups: number,
    initialGroups: Int32Array,
  ) {
    const dd = d * d;
    this.sizes = new Float64Array(groups);
    this.means = new Float64Array(groups * d);
    this.scatters = new Float64Array(groups * dd);
    this.traces = new Float64Array(groups);
    this.terms = new Float64Array(groups);
    this.alive = new Uint8Array(groups).fill(1);
    this.partner = new Int32Array(groups).fill(-1);
    this.partnerCost = new Float64Array(groups).fill(Infinity);
    this.work = new Float64Array(dd);
    for (let i = 0; i < m; i++) {
      const group = initialGroups[i];
      if (this.sizes[group]++ === 0) this.means.set(rows.subarray(i * d, i * d + d), group * d);
    }
    // α: the mean variance per feature of all rows (trace of their scatter over m·d).
    let total = 0;
    for (let a = 0; a < d; a++) {
      let mean = 0;
      for (let i = 0; i < m; i++) mean += rows[i * d + a] / m;
      for (let i = 0; i < m; i++) total += (rows[i * d + a] - mean) ** 2;
    }
    this.alpha = Math.max(total / (m * d), Number.EPSILON);
    for (let group = 0; group < groups; group++) this.terms[group] = this.criterion(this.sizes[group], 0, null);
    this.costs = new Float64Array(groups * groups);
    for (let j = 1; j < groups; j++) {
      for (let i = 0; i < j; i++) {
        const cost = this.mergeCost(i, j);
        this.setCost(i, j, cost);
        this.offer(i, j, cost);
        this.offer(j, i, cost);
      }
    }
  }

  /** Fraley's regularised n log|W/n| (see the file comment); `scatter` (overwritten) null means W = 0. */
  private criterion(n: number, trace: number, scatter: Float64Array | null): number {
    const { d, alpha } = this;
    const ridge = (trace + alpha) / n;
    if (n <= d || trace === 0 || !scatter || !choleskyInPlace(scatter, 0, d)) return n * Math.log(ridge);
    // |W/n| = Π L_ii² / nᵈ: one logarithm instead of d + 2 while the product stays in range.
    let determinant = 1;
    for (let a = 0; a < d; a++) determinant *= (scatter[a * d + a] * scatter[a * d + a]) / n;
    if (determinant > 1e-250 && determinant < 1e250) return n * Math.log(determinant + ridge);
    const logDeterminant = 2 * logDiagonalSum(scatter, 0, d) - d * Math.log(n);
    return logDeterminant <= 0 ? n * Math.log(Math.exp(logDeterminant) + ridge) : n * (logDeterminant + Math.log1p(Math.exp(-logDeterminant) * ridge));
  }

  /** Criterion of the union of groups i and j; its trace is left in `unionTrace`. */
  private unionTerm(i: number, j: number): number {
    const { d, means, work } = this;
    const n = this.sizes[i] + this.sizes[j];
    const factor = (this.sizes[i] * this.sizes[j]) / n;
    let trace = this.traces[i] + this.traces[j];
    for (let a = 0; a < d; a++) trace += factor * (means[i * d + a] - means[j * d + a]) ** 2;
    this.unionTrace = trace;
    if (n <= d || trace === 0) return this.criterion(n, trace, null);
    const dd = d * d;
    for (let a = 0; a < d; a++) {
      const deltaA = means[i * d + a] - means[j * d + a];
      for (let b = 0; b <= a; b++) {
        work[a * d + b] = this.scatters[i * dd + a * d + b] + this.scatters[j * dd + a * d + b] + factor * deltaA * (means[i * d + b] - means[j * d + b]);
      }
    }
    return this.criterion(n, trace, work);
  }

  private mergeCost(i: number, j: number): number {
    return this.unionTerm(i, j) - this.terms[i] - this.terms[j];
  }

  private setCost(i: number, j: number, cost: number): void {
    this.costs[i * this.groups + j] = cost;
    this.costs[j * this.groups + i] = cost;
  }

  private offer(group: number, other: number, cost: number): void {
    if (cost < this.partnerCost[group]) {
      this.partnerCost[group] = cost;
      this.partner[group] = other;
    }
  }

  private rescan(group: number): void {
    this.partner[group] = -1;
    this.partnerCost[group] = Infinity;
    const row = group * this.groups;
    for (let other = 0; other < this.groups; other++) if (other !== group && this.alive[other]) this.offer(group, other, this.costs[row + other]);
  }

  /** Joins j into i (i < j): size, mean, scatter, trace and criterion of the union. */
  private join(i: number, j: number): void {
    const { d, means } = this;
    const dd = d * d;
    const n = this.sizes[i] + this.sizes[j];
    const factor = (this.sizes[i] * this.sizes[j]) / n;
    const term = this.unionTerm(i, j);
    const trace = this.unionTrace;
    for (let a = 0; a < d; a++) {
      const deltaA = means[i * d + a] - means[j * d + a];
      for (let b = 0; b <= a; b++) {
        this.scatters[i * dd + a * d + b] += this.scatters[j * dd + a * d + b] + factor * deltaA * (means[i * d + b] - means[j * d + b]);
      }
    }
    for (let a = 0; a < d; a++) means[i * d + a] = (this.sizes[i] * means[i * d + a] + this.sizes[j] * means[j * d + a]) / n;
    this.sizes[i] = n;
    this.traces[i] = trace;
    this.terms[i] = term;
    this.alive[j] = 0;
  }

  /**
   * Merges down to one group; returns the merges in order. A group whose cheapest partner was
   * merged away is only marked stale, its old cost kept as a lower bound of its new cheapest
   * (the other pairs' costs did not change, and the new group's cost is offered as usual); it is
   * rescanned only when that bound is the smallest of all, so each step stays near O(groups).
   */
  mergeAll(): Int32Array {
    const merges = new Int32Array(2 * Math.max(0, this.groups - 1));
    const stale = new Uint8Array(this.groups);
    for (let step = 0; step < this.groups - 1; step++) {
      let best = -1;
      for (;;) {
        best = -1;
        for (let group = 0; group < this.groups; group++) {
          if (this.alive[group] && (best < 0 || this.partnerCost[group] < this.partnerCost[best])) best = group;
        }
        if (!stale[best]) break;
        stale[best] = 0;
        this.rescan(best);
      }
      const i = Math.min(best, this.partner[best]);
      const j = Math.max(best, this.partner[best]);
      this.join(i, j);
      merges[2 * step] = i;
      merges[2 * step + 1] = j;
      for (let other = 0; other < this.groups; other++) {
        if (!this.alive[other] || other === i) continue;
        const cost = this.mergeCost(i, other);
        this.setCost(i, other, cost);
        if (cost < this.partnerCost[other]) {
          this.partnerCost[other] = cost;
          this.partner[other] = i;
          stale[other] = 0;
        } else if (this.partner[other] === i || this.partner[other] === j) {
          stale[other] = 1;
        }
      }
      stale[i] = 0;
      this.rescan(i);
    }
    return merges;
  }
}
