/**
 * Component matching between two fitted mixtures: Bhattacharyya distances between Gaussian
 * components and the Hungarian algorithm for the minimum-cost assignment.
 *
 * A monthly refit uses `matchComponents(parent, child)` to carry segment names over: the new
 * segments are paired with last month's so that the total Bhattacharyya distance is smallest;
 * segments left without a partner are new (child side) or retired (parent side).
 */
import { InputError } from '../errors.js';
import { choleskyLower, logDiagonalSum, solveLowerInPlace } from './gaussian.js';

/** One Gaussian: mean (d) and covariance (d × d, row-major, symmetric positive definite). */
export interface GaussianComponent {
  mean: Float64Array;
  covariance: Float64Array;
}

/**
 * The parts of a fitted mixture that matching needs (a MixtureModel has them):
 * means k × d and covariances k × d × d, row-major.
 */
export interface ComponentSet {
  components: number;
  dimensions: number;
  means: Float64Array;
  covariances: Float64Array;
}

/** A rows × cols cost matrix: `values[i * cols + j]` is the cost of pairing row i with column j. */
export interface CostMatrix {
  values: Float64Array;
  rows: number;
  cols: number;
}

export interface AssignedPair {
  row: number;
  column: number;
  cost: number;
}

/**
 * A minimum-cost assignment. Every row is paired when rows ≤ cols, every column when cols ≤ rows;
 * the rest are listed as unmatched. Pairs are in ascending row order.
 */
export interface Assignment {
  pairs: AssignedPair[];
  totalCost: number;
  unmatchedRows: number[];
  unmatchedColumns: number[];
}

export interface ComponentPair {
  parent: number;
  child: number;
  distance: number;
}

export interface ComponentMatching {
  /** Pairs in ascending parent order. */
  pairs: ComponentPair[];
  totalDistance: number;
  /** Parent components without a child partner (retired segments). */
  unmatchedParents: number[];
  /** Child components without a parent partner (new segments). */
  unmatchedChildren: number[];
  /** parents × children Bhattacharyya distances, for display or a distance threshold. */
  distances: CostMatrix;
}

/** Relative asymmetry tolerated in a covariance before it is called not symmetric. */
const symmetryTolerance = 1e-8;

/** A validated component: symmetrised covariance and its Cholesky log-determinant. */
interface PreparedComponent {
  mean: Float64Array;
  covariance: Float64Array;
  logDeterminant: number;
}

function prepareComponent(component: GaussianComponent, label: string): PreparedComponent {
  if (!(component?.mean instanceof Float64Array) || !(component?.covariance instanceof Float64Array)) {
    throw new InputError(`${label}: mean and covariance must be Float64Arrays.`);
  }
  const d = component.mean.length;
  if (d < 1) throw new InputError(`${label}: the mean has no entries.`);
  if (component.covariance.length !== d * d) {
    throw new InputError(
      `${label}: the covariance has ${component.covariance.length} entries; a ${d}-dimensional mean needs ${d * d} (d × d, row-major).`,
    );
  }
  for (let i = 0; i < d; i++) {
    if (!Number.isFinite(component.mean[i])) throw new InputError(`${label}: mean entry ${i} is not a finite number.`);
  }
  const covariance = new Float64Array(d * d);
  for (let i = 0; i < d; i++) {
    for (let j = 0; j <= i; j++) {
      const lower = component.covariance[i * d + j];
      const upper = component.covariance[j * d + i];
      if (!Number.isFinite(lower) || !Number.isFinite(upper)) {
        throw new InputError(`${label}: covariance entry (${i}, ${j}) is not a finite number.`);
      }
      const scale = Math.sqrt(Math.abs(component.covariance[i * d + i] * component.covariance[j * d + j]));
      if (Math.abs(lower - upper) > symmetryTolerance * scale) {
        throw new InputError(`${label}: the covariance is not symmetric at (${i}, ${j}): ${lower} vs ${upper}.`);
      }
      // Exactly symmetric from here on, so the distance is symmetric in its two arguments.
      const average = (lower + upper) / 2;
      covariance[i * d + j] = average;
      covariance[j * d + i] = average;
    }
  }
  const lower = choleskyLower(covariance, 0, d);
  if (!lower) throw new InputError(`${label}: the covariance is not positive definite.`);
  // log det from the factor, 2 Σ log L_ii (stable where the determinant itself underflows).
  return { mean: component.mean, covariance, logDeterminant: 2 * logDiagonalSum(lower, 0, d) };
}

/**
 * D_B = ⅛ (μ₁−μ₂)ᵀ Σ⁻¹ (μ₁−μ₂) + ½ ln( det Σ / √(det Σ₁ det Σ₂) ), with Σ = (Σ₁+Σ₂)/2
 * (Bhattacharyya 1943; the Gaussian closed form as in Fukunaga 1990, from memory).
 */
function preparedDistance(a: PreparedComponent, b: PreparedComponent, label: string): number {
  const d = a.mean.length;
  if (b.mean.length !== d) {
    throw new InputError(`${label}: the components have different dimensions (${d} and ${b.mean.length}).`);
  }
  const average = new Float64Array(d * d);
  for (let i = 0; i < d * d; i++) average[i] = (a.covariance[i] + b.covariance[i]) / 2;
  const lower = choleskyLower(average, 0, d);
  if (!lower) {
    // Unreachable for two positive definite inputs except through rounding at the edge.
    throw new InputError(`${label}: the averaged covariance is not positive definite.`);
  }
  // (μ₁−μ₂)ᵀ Σ⁻¹ (μ₁−μ₂) = ‖L⁻¹ (μ₁−μ₂)‖².
  const whitened = new Float64Array(d);
  for (let i = 0; i < d; i++) whitened[i] = a.mean[i] - b.mean[i];
  solveLowerInPlace(lower, 0, whitened, d);
  let mahalanobisSquared = 0;
  for (let i = 0; i < d; i++) mahalanobisSquared += whitened[i] * whitened[i];
  const logDeterminant = 2 * logDiagonalSum(lower, 0, d);
  const distance = mahalanobisSquared / 8 + (logDeterminant - (a.logDeterminant + b.logDeterminant) / 2) / 2;
  // The log-determinant term is ≥ 0 in exact arithmetic; rounding can leave −1e-16.
  return Math.max(distance, 0);
}

/** Bhattacharyya distance between two Gaussians (0 for identical ones, symmetric, ≥ 0). */
export function bhattacharyyaDistance(a: GaussianComponent, b: GaussianComponent): number {
  return preparedDistance(prepareComponent(a, 'first component'), prepareComponent(b, 'second component'), 'Bhattacharyya distance');
}

/** The components of a fitted mixture as views (no copies) into its means and covariances. */
export function componentsOf(set: ComponentSet): GaussianComponent[] {
  const { components: k, dimensions: d, means, covariances } = set;
  if (!Number.isInteger(k) || k < 0 || !Number.isInteger(d) || d < 1) {
    throw new InputError(`A component set needs a whole number of components ≥ 0 and dimensions ≥ 1 (got ${k} and ${d}).`);
  }
  if (!(means instanceof Float64Array) || !(covariances instanceof Float64Array)) {
    throw new InputError('A component set needs its means and covariances as Float64Arrays.');
  }
  if (means.length !== k * d || covariances.length !== k * d * d) {
    throw new InputError(
      `A component set of ${k} components in ${d} dimensions needs ${k * d} means and ${k * d * d} covariance entries (got ${means.length} and ${covariances.length}).`,
    );
  }
  const result: GaussianComponent[] = [];
  for (let c = 0; c < k; c++) {
    result.push({
      mean: means.subarray(c * d, (c + 1) * d),
      covariance: covariances.subarray(c * d * d, (c + 1) * d * d),
    });
  }
  return result;
}

/** A cost matrix from an array of equally long rows. */
export function costMatrixFromRows(rows: readonly (readonly number[])[]): CostMatrix {
  const cols = rows.length === 0 ? 0 : rows[0].length;
  const values = new Float64Array(rows.length * cols);
  rows.forEach((row, i) => {
    if (row.length !== cols) {
      throw new InputError(`Cost matrix row ${i} has ${row.length} entries; row 0 has ${cols}.`);
    }
    values.set(row, i * cols);
  });
  return { values, rows: rows.length, cols };
}

function validateCostMatrix(costs: CostMatrix): void {
  const { values, rows, cols } = costs;
  if (!(values instanceof Float64Array)) throw new InputError('Cost matrix values must be a Float64Array.');
  if (!Number.isInteger(rows) || rows < 0 || !Number.isInteger(cols) || cols < 0) {
    throw new InputError(`Cost matrix shape must be whole numbers ≥ 0 (got ${rows} × ${cols}).`);
  }
  if (values.length !== rows * cols) {
    throw new InputError(`Cost matrix of ${rows} × ${cols} needs ${rows * cols} values (got ${values.length}).`);
  }
  for (let index = 0; index < values.length; index++) {
    if (!Number.isFinite(values[index])) {
      const row = Math.floor(index / cols);
      throw new InputError(`Cost matrix entry (${row}, ${index - row * cols}) is not a finite number: ${values[index]}.`);
    }
  }
}

/**
 * Hungarian method with row and column potentials, as shortest augmenting paths (Kuhn 1955,
 * Munkres 1957; this O(n² m) form is the common-practice one). Needs n ≤ m.
 * cost(i, j) is row i, column j for 0-based i < n, j < m. Returns the column of each row.
 */
function assignRowsToColumns(n: number, m: number, cost: (i: number, j: number) => number): Int32Array {
  // 1-based internally; index 0 is the virtual start of each augmenting path.
  const rowPotential = new Float64Array(n + 1);
  const columnPotential = new Float64Array(m + 1);
  const rowOfColumn = new Int32Array(m + 1);
  const previousColumn = new Int32Array(m + 1);
  const slack = new Float64Array(m + 1);
  const visited = new Uint8Array(m + 1);
  for (let row = 1; row <= n; row++) {
    rowOfColumn[0] = row;
    let column = 0;
    slack.fill(Infinity);
    visited.fill(0);
    do {
      visited[column] = 1;
      const currentRow = rowOfColumn[column];
      let delta = Infinity;
      let nextColumn = 0;
      for (let j = 1; j <= m; j++) {
        if (visited[j]) continue;
        const reduced = cost(currentRow - 1, j - 1) - rowPotential[currentRow] - columnPotential[j];
        if (reduced < slack[j]) {
          slack[j] = reduced;
          previousColumn[j] = column;
        }
        if (slack[j] < delta) {
          delta = slack[j];
          nextColumn = j;
        }
      }
      for (let j = 0; j <= m; j++) {
        if (visited[j]) {
          rowPotential[rowOfColumn[j]] += delta;
          columnPotential[j] -= delta;
        } else {
          slack[j] -= delta;
        }
      }
      column = nextColumn;
    } while (rowOfColumn[column] !== 0);
    // Flip the augmenting path back to its start.
    do {
      const previous = previousColumn[column];
      rowOfColumn[column] = rowOfColumn[previous];
      column = previous;
    } while (column !== 0);
  }
  const columnOfRow = new Int32Array(n).fill(-1);
  for (let j = 1; j <= m; j++) if (rowOfColumn[j] !== 0) columnOfRow[rowOfColumn[j] - 1] = j - 1;
  return columnOfRow;
}

/**
 * Minimum-cost assignment on a rectangular cost matrix (rows ≠ cols allowed): min(rows, cols)
 * pairs, each row and column used at most once, with the smallest total cost.
 */
export function minimumCostAssignment(costs: CostMatrix): Assignment {
  validateCostMatrix(costs);
  const { values, rows, cols } = costs;
  const pairs: AssignedPair[] = [];
  if (rows <= cols) {
    const columnOfRow = assignRowsToColumns(rows, cols, (i, j) => values[i * cols + j]);
    columnOfRow.forEach((column, row) => pairs.push({ row, column, cost: values[row * cols + column] }));
  } else {
    // More rows than columns: assign the columns to rows on the transposed problem.
    const rowOfColumn = assignRowsToColumns(cols, rows, (j, i) => values[i * cols + j]);
    rowOfColumn.forEach((row, column) => pairs.push({ row, column, cost: values[row * cols + column] }));
    pairs.sort((a, b) => a.row - b.row);
  }
  const rowUsed = new Uint8Array(rows);
  const columnUsed = new Uint8Array(cols);
  let totalCost = 0;
  for (const pair of pairs) {
    rowUsed[pair.row] = 1;
    columnUsed[pair.column] = 1;
    totalCost += pair.cost;
  }
  const unmatchedRows: number[] = [];
  const unmatchedColumns: number[] = [];
  rowUsed.forEach((used, row) => used || unmatchedRows.push(row));
  columnUsed.forEach((used, column) => used || unmatchedColumns.push(column));
  return { pairs, totalCost, unmatchedRows, unmatchedColumns };
}

/** Parent × child Bhattacharyya distances (each covariance factorised once). */
export function bhattacharyyaCostMatrix(
  parentComponents: readonly GaussianComponent[],
  childComponents: readonly GaussianComponent[],
): CostMatrix {
  if (!Array.isArray(parentComponents) || !Array.isArray(childComponents)) {
    throw new InputError('Component matching needs two arrays of components (parent and child).');
  }
  const parents = parentComponents.map((component, index) => prepareComponent(component, `parent component ${index}`));
  const children = childComponents.map((component, index) => prepareComponent(component, `child component ${index}`));
  const dimensions = new Set([...parents, ...children].map((component) => component.mean.length));
  if (dimensions.size > 1) {
    throw new InputError(`All components must have the same dimension; got ${[...dimensions].join(', ')}.`);
  }
  const values = new Float64Array(parents.length * children.length);
  for (let p = 0; p < parents.length; p++) {
    for (let c = 0; c < children.length; c++) {
      values[p * children.length + c] = preparedDistance(parents[p], children[c], `parent ${p} vs child ${c}`);
    }
  }
  return { values, rows: parents.length, cols: children.length };
}

/**
 * Pairs the child (new) components with the parent (previous) ones so that the total
 * Bhattacharyya distance is smallest; extra components on either side are reported unmatched.
 */
export function matchComponents(
  parentComponents: readonly GaussianComponent[],
  childComponents: readonly GaussianComponent[],
): ComponentMatching {
  const distances = bhattacharyyaCostMatrix(parentComponents, childComponents);
  const assignment = minimumCostAssignment(distances);
  return {
    pairs: assignment.pairs.map(({ row, column, cost }) => ({ parent: row, child: column, distance: cost })),
    totalDistance: assignment.totalCost,
    unmatchedParents: assignment.unmatchedRows,
    unmatchedChildren: assignment.unmatchedColumns,
    distances,
  };
}
