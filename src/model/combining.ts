/**
 * Combining mixture components into segments by the entropy criterion of Baudry, Raftery,
 * Celeux, Lo & Gottardo (2010), "Combining mixture components for clustering", J. Comput.
 * Graph. Stat. 19(2), 332–353, computed as mclust's clustCombi, clustCombiOptim and entPlot do
 * (read in R from Debian's r-cran-mclust 6.0.0 and checked against it in
 * test/model/combining.test.ts):
 *
 * - A segment's posterior is the sum of its components' posteriors.
 * - Entropy of a level: −Σᵢ Σ_g t_ig log t_ig (0 log 0 = 0) over its segment posteriors t.
 * - From K groups, the two groups merged are the pair (l1 < l2) whose merge lowers the entropy
 *   most: the largest Σᵢ [(t_il1 + t_il2) log(t_il1 + t_il2) − t_il1 log t_il1 − t_il2 log t_il2];
 *   ties go to the smallest l2, then the smallest l1, and when no merge lowers the entropy at all
 *   groups 1 and 2 merge (mclust's order of search). The union takes l1's place and the groups
 *   after l2 move up one.
 * - Classification of a level: each row's segment of highest posterior (the first on ties).
 * - The number of segments: the change point of a two-piece linear least-squares fit of the
 *   entropy against the number of segments (clustCombiOptim with its default reg = 2; with two
 *   components, 2); the same fit against the cumulative count of merged observations (entPlot's
 *   "normalized" plot) is given beside it.
 *
 * Shapes: posteriors n × K row-major (posteriors[i·K + c] is row i's posterior of component c,
 * each row summing to 1); component and segment indices 0-based.
 */
import { InputError } from '../errors.js';

/** Which components each segment holds: segments[s] lists component indices ascending; every component in exactly one segment. */
export interface Segmentation {
  components: number;
  segments: number[][];
}

/** One level of the combining hierarchy. */
export interface CombiningLevel {
  /** Segments at this level (K at the first level, then one fewer per merge, down to 1). */
  segmentCount: number;
  /** Which components each segment holds, in mclust's order of groups. */
  segmentation: Segmentation;
  /** The two segments of the level above (0-based, first < second) merged into this one; null at the first level. */
  merged: [number, number] | null;
  /** −Σᵢ Σ_s t_is log t_is of this level's segment posteriors. */
  entropy: number;
  /** Each row's segment of highest posterior (n; the first on ties). */
  classification: Int32Array;
  /**
   * Rows whose segment at the level above was one of the two merged into this level (0 at the
   * first level): entPlot's count of merged observations.
   */
  mergedRows: number;
}

export interface CombiningHierarchy {
  rows: number;
  components: number;
  /** levels[0] has K segments (the components themselves), levels[K − 1] has one. */
  levels: CombiningLevel[];
  /** Number of segments chosen by the change point against the number of segments (clustCombiOptim). */
  chosenSegments: number;
  /** The change point of the same fit against the cumulative count of merged observations. */
  chosenSegmentsByMergedRows: number;
}

/** Σ x log x over the values, with 0 log 0 = 0. */
function entropyTerm(value: number): number {
  return value > 0 ? value * Math.log(value) : 0;
}

function checkPosteriors(posteriors: Float64Array, rows: number, components: number): void {
  if (!Number.isInteger(rows) || rows < 1 || !Number.isInteger(components) || components < 1) {
    throw new InputError(`Combining needs at least one row and one component; got ${rows} × ${components}.`);
  }
  if (!(posteriors instanceof Float64Array) || posteriors.length !== rows * components) {
    throw new InputError(`Combining needs the posteriors as a Float64Array of rows × components = ${rows * components} numbers.`);
  }
  for (let i = 0; i < posteriors.length; i++) {
    if (!(posteriors[i] >= 0 && posteriors[i] <= 1)) {
      throw new InputError(`Posterior ${posteriors[i]} at row ${Math.floor(i / components) + 1} is not a probability.`);
    }
  }
}

/** Segment posteriors (n × S) of a segmentation: each segment's column the sum of its components' columns. */
export function segmentPosteriors(posteriors: Float64Array, rows: number, segmentation: Segmentation): Float64Array {
  checkSegmentation(segmentation);
  const { components: k, segments } = segmentation;
  if (posteriors.length !== rows * k) throw new InputError(`The posteriors hold ${posteriors.length} numbers, not rows × components = ${rows * k}.`);
  const count = segments.length;
  const result = new Float64Array(rows * count);
  for (let row = 0; row < rows; row++) {
    for (let s = 0; s < count; s++) {
      let sum = 0;
      for (const component of segments[s]) sum += posteriors[row * k + component];
      result[row * count + s] = sum;
    }
  }
  return result;
}

/** Each row's column of highest value in an n × S matrix (the first on ties, as mclust's map). */
export function classify(segmentPosteriorsByRow: Float64Array, rows: number, count: number): Int32Array {
  const labels = new Int32Array(rows);
  for (let row = 0; row < rows; row++) {
    let best = 0;
    for (let s = 1; s < count; s++) if (segmentPosteriorsByRow[row * count + s] > segmentPosteriorsByRow[row * count + best]) best = s;
    labels[row] = best;
  }
  return labels;
}

function levelEntropy(values: Float64Array): number {
  let sum = 0;
  for (let i = 0; i < values.length; i++) sum += entropyTerm(values[i]);
  return 0 - sum; // not −0 when every row is certain
}

/**
 * The full combining hierarchy from n × K posteriors: K levels, from the components themselves
 * down to one segment, each with its merge, entropy, classification and segmentation, and the
 * number of segments the entropy curve's change point chooses.
 */
export function combineComponents(posteriors: Float64Array, rows: number, components: number): CombiningHierarchy {
  checkPosteriors(posteriors, rows, components);
  let groups: number[][] = Array.from({ length: components }, (_, c) => [c]);
  let current = Float64Array.from(posteriors);
  const first = classify(current, rows, components);
  const levels: CombiningLevel[] = [
    { segmentCount: components, segmentation: { components, segments: groups }, merged: null, entropy: levelEntropy(current), classification: first, mergedRows: 0 },
  ];
  for (let count = components; count > 1; count--) {
    const [l1, l2] = bestMerge(current, rows, count);
    const previousClassification = levels[levels.length - 1].classification;
    let mergedRows = 0;
    for (let row = 0; row < rows; row++) if (previousClassification[row] === l1 || previousClassification[row] === l2) mergedRows++;
    const next = new Float64Array(rows * (count - 1));
    for (let row = 0; row < rows; row++) {
      let target = 0;
      for (let g = 0; g < count; g++) {
        if (g === l2) continue;
        next[row * (count - 1) + target] = current[row * count + g] + (g === l1 ? current[row * count + l2] : 0);
        target++;
      }
    }
    groups = groups.filter((_, g) => g !== l2).map((members, g) => (g === l1 ? [...members, ...groups[l2]].sort((a, b) => a - b) : members));
    current = next;
    levels.push({
      segmentCount: count - 1,
      segmentation: { components, segments: groups },
      merged: [l1, l2],
      entropy: levelEntropy(current),
      classification: classify(current, rows, count - 1),
      mergedRows,
    });
  }
  return {
    rows,
    components,
    levels,
    chosenSegments: entropyChangePoint(levels, 'segments'),
    chosenSegmentsByMergedRows: entropyChangePoint(levels, 'mergedRows'),
  };
}

/**
 * The number of segments reached by merging down the hierarchy only while each merge joins groups
 * whose rows could not tell them apart: merging stops before the first merge whose entropy drop
 * per merged row (rows of the two merged groups, `mergedRows`) is below `natsPerRow` — where the
 * slope of the normalised entropy curve first flattens below it. A row split p / (1 − p) between
 * two groups loses −p log p − (1 − p) log(1 − p) nats when they merge, so the threshold reads as
 * "on average at least that unsure between the two".
 */
export function segmentsWhileAmbiguous(hierarchy: { levels: readonly Pick<CombiningLevel, 'segmentCount' | 'entropy' | 'mergedRows'>[] }, natsPerRow: number): number {
  if (!(natsPerRow > 0)) throw new InputError(`The entropy drop per merged row must be positive; got ${natsPerRow}.`);
  const { levels } = hierarchy;
  for (let i = 1; i < levels.length; i++) {
    const drop = levels[i - 1].entropy - levels[i].entropy;
    if (levels[i].mergedRows === 0 || drop / levels[i].mergedRows < natsPerRow) return levels[i - 1].segmentCount;
  }
  return levels[levels.length - 1].segmentCount;
}

/** The pair (l1 < l2) whose merge lowers the entropy most, in mclust's order of search (see the file comment). */
function bestMerge(current: Float64Array, rows: number, count: number): [number, number] {
  let best: [number, number] = [0, 1];
  let bestGain = 0;
  // Column-major over (l1, l2): l2 outer, l1 inner, so the first maximum found is mclust's.
  for (let l2 = 1; l2 < count; l2++) {
    for (let l1 = 0; l1 < l2; l1++) {
      let gain = 0;
      for (let row = 0; row < rows; row++) {
        const a = current[row * count + l1];
        const b = current[row * count + l2];
        gain += entropyTerm(a + b) - (entropyTerm(a) + entropyTerm(b));
      }
      if (gain > bestGain) {
        bestGain = gain;
        best = [l1, l2];
      }
    }
  }
  return best;
}

/**
 * The number of segments at the change point of the best two-piece linear least-squares fit of
 * entropy (y) against x — the number of segments, or the cumulative count of merged rows (0 at
 * one segment, growing by each merge's mergedRows towards K) — with both pieces sharing the
 * change point and holding at least two points (mclust's pcws2_reg; the first best on ties).
 */
function entropyChangePoint(levels: CombiningLevel[], axis: 'segments' | 'mergedRows'): number {
  const count = levels.length;
  if (count <= 2) return count;
  // Points in order of the number of segments, 1 … K.
  const entropy = levels.map((level) => level.entropy).reverse();
  const x: number[] = [];
  let cumulative = 0;
  for (let segments = 1; segments <= count; segments++) {
    x.push(axis === 'segments' ? segments : cumulative);
    if (segments < count) cumulative += levels[count - segments].mergedRows; // merged into the level with `segments` segments
  }
  let bestSum = Infinity;
  let bestPoint = count;
  for (let point = 2; point <= count - 1; point++) {
    const sum = residualSquares(x.slice(0, point), entropy.slice(0, point)) + residualSquares(x.slice(point - 1), entropy.slice(point - 1));
    if (sum < bestSum) {
      bestSum = sum;
      bestPoint = point;
    }
  }
  return bestPoint;
}

/** Residual sum of squares of the least-squares line through the points (NaN when every x is equal). */
function residualSquares(x: number[], y: number[]): number {
  const meanX = x.reduce((sum, value) => sum + value, 0) / x.length;
  const meanY = y.reduce((sum, value) => sum + value, 0) / y.length;
  let covariance = 0;
  let variance = 0;
  for (let i = 0; i < x.length; i++) {
    covariance += (x[i] - meanX) * (y[i] - meanY);
    variance += (x[i] - meanX) ** 2;
  }
  const slope = covariance / variance;
  const intercept = meanY - slope * meanX;
  let sum = 0;
  for (let i = 0; i < x.length; i++) sum += (slope * x[i] + intercept - y[i]) ** 2;
  return sum;
}

// ---------------------------------------------------------------------------------------------
// hand operations

/** Refuses a segmentation that is not a partition of the components 0 … K − 1 into non-empty segments, naming what is wrong. */
export function checkSegmentation(segmentation: Segmentation): void {
  const { components: k, segments } = segmentation;
  const seen = new Uint8Array(k);
  for (const members of segments) {
    if (members.length === 0) throw new InputError('A segment must hold at least one component.');
    for (const component of members) {
      if (!Number.isInteger(component) || component < 0 || component >= k) {
        throw new InputError(`Component ${component} does not exist: the model has components 0 … ${k - 1}.`);
      }
      if (seen[component]++) throw new InputError(`Component ${component} is in more than one segment.`);
    }
  }
  const missing = [...seen.keys()].filter((component) => !seen[component]);
  if (missing.length > 0) throw new InputError(`Component${missing.length > 1 ? 's' : ''} ${missing.join(', ')} ${missing.length > 1 ? 'are' : 'is'} in no segment.`);
}

/** The segmentation of the hierarchy's level with `segmentCount` segments (1 … components). */
export function segmentationAtLevel(hierarchy: { components: number; levels: readonly { segmentation: Segmentation }[] }, segmentCount: number): Segmentation {
  if (!Number.isInteger(segmentCount) || segmentCount < 1) throw new InputError(`The number of segments must be a whole number ≥ 1; got ${segmentCount}.`);
  if (segmentCount > hierarchy.components) {
    throw new InputError(
      `Cannot make ${segmentCount} segments from ${hierarchy.components} components: a segment is one or more components, so there are at most ${hierarchy.components}.`,
    );
  }
  return hierarchy.levels[hierarchy.components - segmentCount].segmentation;
}

/** Merges segments a and b (0-based) into one that takes the place of the first of them; the rest keep their order. */
export function mergeSegments(segmentation: Segmentation, a: number, b: number): Segmentation {
  checkSegmentation(segmentation);
  const { segments } = segmentation;
  for (const index of [a, b]) {
    if (!Number.isInteger(index) || index < 0 || index >= segments.length) {
      throw new InputError(`Segment ${index} does not exist: there are segments 0 … ${segments.length - 1}.`);
    }
  }
  if (a === b) throw new InputError(`Cannot merge segment ${a} with itself.`);
  const [low, high] = a < b ? [a, b] : [b, a];
  return {
    components: segmentation.components,
    segments: segments.filter((_, s) => s !== high).map((members, s) => (s === low ? [...members, ...segments[high]].sort((x, y) => x - y) : members)),
  };
}

/**
 * Splits segment `segment` into the given groups of its components (each a new segment, in the
 * given order, in the segment's place). The groups must hold exactly the segment's components,
 * each once, and none may be empty.
 */
export function splitSegment(segmentation: Segmentation, segment: number, parts: readonly (readonly number[])[]): Segmentation {
  checkSegmentation(segmentation);
  const { segments } = segmentation;
  if (!Number.isInteger(segment) || segment < 0 || segment >= segments.length) {
    throw new InputError(`Segment ${segment} does not exist: there are segments 0 … ${segments.length - 1}.`);
  }
  if (parts.length < 2) throw new InputError('A split needs at least two groups of components.');
  const empty = parts.findIndex((part) => part.length === 0);
  if (empty >= 0) throw new InputError(`Group ${empty + 1} of the split holds no component: a split may not leave a segment empty.`);
  const held = new Set(segments[segment]);
  const given = parts.flat();
  const foreign = given.filter((component) => !held.has(component));
  if (foreign.length > 0) throw new InputError(`Component ${foreign.join(', ')} is not in segment ${segment}, which holds ${segments[segment].join(', ')}.`);
  if (new Set(given).size !== given.length) throw new InputError('A component appears in more than one group of the split.');
  const left = segments[segment].filter((component) => !given.includes(component));
  if (left.length > 0) throw new InputError(`The split leaves component ${left.join(', ')} of segment ${segment} in no group.`);
  return {
    components: segmentation.components,
    segments: [...segments.slice(0, segment), ...parts.map((part) => [...part].sort((x, y) => x - y)), ...segments.slice(segment + 1)],
  };
}
