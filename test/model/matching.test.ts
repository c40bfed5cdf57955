import { readFileSync } from 'node:fs';
import { uniformFloat64 } from 'pure-rand/distribution/uniformFloat64';
import { uniformInt } from 'pure-rand/distribution/uniformInt';
import { xoroshiro128plus } from 'pure-rand/generator/xoroshiro128plus';
import { describe, expect, it } from 'vitest';
import { InputError } from '../../src/errors.js';
import {
  bhattacharyyaDistance,
  componentsOf,
  costMatrixFromRows,
  matchComponents,
  minimumCostAssignment,
  type Assignment,
  type CostMatrix,
  type GaussianComponent,
} from '../../src/model/matching.js';

const f64 = (values: number[]) => Float64Array.from(values);
const gaussian = (mean: number[], covariance: number[]): GaussianComponent => ({ mean: f64(mean), covariance: f64(covariance) });

/** Smallest total cost over every way to pair min(rows, cols) rows and columns, by enumeration. */
function bruteForceMinimum(costs: CostMatrix): number {
  const { rows, cols, values } = costs;
  const usedColumns = new Uint8Array(cols);
  let best = Infinity;
  // Place each row on a free column, or leave it out while enough rows remain to fill the columns.
  const visit = (row: number, placed: number, total: number) => {
    const target = Math.min(rows, cols);
    if (placed === target) {
      best = Math.min(best, total);
      return;
    }
    if (row === rows) return;
    for (let column = 0; column < cols; column++) {
      if (usedColumns[column]) continue;
      usedColumns[column] = 1;
      visit(row + 1, placed + 1, total + values[row * cols + column]);
      usedColumns[column] = 0;
    }
    if (rows - row - 1 >= target - placed) visit(row + 1, placed, total);
  };
  visit(0, 0, 0);
  return best;
}

/** Checks that an assignment is a valid partial permutation and that its totals add up. */
function expectValidAssignment(assignment: Assignment, costs: CostMatrix): void {
  const { rows, cols, values } = costs;
  expect(assignment.pairs).toHaveLength(Math.min(rows, cols));
  const rowsSeen = new Set(assignment.pairs.map((pair) => pair.row));
  const columnsSeen = new Set(assignment.pairs.map((pair) => pair.column));
  expect(rowsSeen.size).toBe(assignment.pairs.length);
  expect(columnsSeen.size).toBe(assignment.pairs.length);
  let total = 0;
  for (const pair of assignment.pairs) {
    expect(pair.cost).toBe(values[pair.row * cols + pair.column]);
    total += pair.cost;
  }
  expect(assignment.totalCost).toBeCloseTo(total, 10);
  const allRows = Array.from({ length: rows }, (_, i) => i);
  const allColumns = Array.from({ length: cols }, (_, j) => j);
  expect(assignment.unmatchedRows).toEqual(allRows.filter((row) => !rowsSeen.has(row)));
  expect(assignment.unmatchedColumns).toEqual(allColumns.filter((column) => !columnsSeen.has(column)));
  const orderedRows = assignment.pairs.map((pair) => pair.row);
  expect(orderedRows).toEqual([...orderedRows].sort((a, b) => a - b));
}

function randomCosts(rng: ReturnType<typeof xoroshiro128plus>, rows: number, cols: number, integer: boolean): CostMatrix {
  const values = new Float64Array(rows * cols);
  // Small integers force many ties, which is where assignment codes usually go wrong.
  for (let i = 0; i < values.length; i++) values[i] = integer ? uniformInt(rng, 0, 4) : uniformFloat64(rng) * 100;
  return { values, rows, cols };
}

describe('Bhattacharyya distance', () => {
  it('matches the 1-D closed form worked by hand', () => {
    // 1-D Gaussians (closed form from the general formula, Bhattacharyya 1943, from memory):
    //   D = (μ1−μ2)² / (4(σ1²+σ2²)) + ½ ln((σ1²+σ2²) / (2 σ1 σ2))
    // N(0, 1) vs N(2, 4): 4 / (4·5) = 0.2;  ½ ln(5 / (2·1·2)) = ½ ln 1.25 = 0.11157177565710488
    const distance = bhattacharyyaDistance(gaussian([0], [1]), gaussian([2], [4]));
    expect(distance).toBeCloseTo(0.2 + 0.5 * Math.log(1.25), 14);
    expect(distance).toBeCloseTo(0.31157177565710488, 14);
  });

  it('is one eighth of the squared Mahalanobis distance for equal covariances', () => {
    // Σ = [[2, 0.6], [0.6, 1]], det Σ = 2·1 − 0.6² = 1.64, Σ⁻¹ = [[1, −0.6], [−0.6, 2]] / 1.64.
    // Δ = μ1 − μ2 = (1, 2): Δᵀ Σ⁻¹ Δ = (1·1 − 2·0.6·1·2 + 2·2²) / 1.64 = 6.6 / 1.64 = 4.024390243902439
    // The log-determinant term vanishes (Σ1 = Σ2 = Σ), so D = 4.024390243902439 / 8 = 0.5030487804878049.
    const covariance = [2, 0.6, 0.6, 1];
    const distance = bhattacharyyaDistance(gaussian([3, 1], covariance), gaussian([2, -1], covariance));
    expect(distance).toBeCloseTo(6.6 / 1.64 / 8, 14);
  });

  it('adds up over coordinates for diagonal covariances, worked by hand', () => {
    // Independent coordinates: the density factorises, so does the Bhattacharyya coefficient,
    // and the distance is the sum of the 1-D distances (from the definition).
    // coordinate 1: N(0, 1) vs N(2, 4): 0.2 + ½ ln 1.25
    // coordinate 2: N(0, 4) vs N(−1, 1): 1 / (4·5) = 0.05, + ½ ln(5 / (2·2·1)) = ½ ln 1.25
    const distance = bhattacharyyaDistance(gaussian([0, 0], [1, 0, 0, 4]), gaussian([2, -1], [4, 0, 0, 1]));
    expect(distance).toBeCloseTo(0.25 + Math.log(1.25), 14);
  });

  it('is zero for identical components, symmetric, and unchanged by a shared affine map', () => {
    const a = gaussian([1, -2, 0.5], [2, 0.3, -0.2, 0.3, 1.5, 0.4, -0.2, 0.4, 1]);
    const b = gaussian([0, 1, 2], [1, -0.1, 0, -0.1, 0.5, 0.1, 0, 0.1, 3]);
    expect(bhattacharyyaDistance(a, a)).toBeCloseTo(0, 14);
    expect(bhattacharyyaDistance(a, b)).toBeCloseTo(bhattacharyyaDistance(b, a), 13);
    // x ↦ A x + c maps N(μ, Σ) to N(Aμ + c, A Σ Aᵀ); the distance is invariant (from memory; it
    // follows from the change of variables in the Bhattacharyya coefficient's integral).
    const A = [
      [2, 0, 1],
      [0.5, -1, 0],
      [0, 0.3, 1.5],
    ];
    const shift = [4, -3, 1];
    const map = (g: GaussianComponent): GaussianComponent => {
      const mean = A.map((row, i) => row.reduce((sum, value, j) => sum + value * g.mean[j], shift[i]));
      const covariance: number[] = [];
      for (let i = 0; i < 3; i++) {
        for (let j = 0; j < 3; j++) {
          let sum = 0;
          for (let p = 0; p < 3; p++) for (let q = 0; q < 3; q++) sum += A[i][p] * g.covariance[p * 3 + q] * A[j][q];
          covariance.push(sum);
        }
      }
      return gaussian(mean, covariance);
    };
    expect(bhattacharyyaDistance(map(a), map(b))).toBeCloseTo(bhattacharyyaDistance(a, b), 11);
  });

  it('rejects bad components with clear messages', () => {
    const good = gaussian([0, 0], [1, 0, 0, 1]);
    expect(() => bhattacharyyaDistance(good, gaussian([0, 0], [1, 2, 2, 1]))).toThrow(/not positive definite/);
    expect(() => bhattacharyyaDistance(good, gaussian([0, 0], [1, 0.5, 0.2, 1]))).toThrow(/not symmetric at \(1, 0\)/);
    expect(() => bhattacharyyaDistance(good, gaussian([0, 0], [1, 0, 0]))).toThrow(/needs 4/);
    expect(() => bhattacharyyaDistance(good, gaussian([0, Number.NaN], [1, 0, 0, 1]))).toThrow(/mean entry 1/);
    expect(() => bhattacharyyaDistance(good, gaussian([0], [1]))).toThrow(/different dimensions/);
    expect(() => bhattacharyyaDistance(good, gaussian([0, 0], [1, 0, 0, 1]))).not.toThrow();
    expect(() => bhattacharyyaDistance(good, gaussian([0, 0], [1, 2, 2, 1]))).toThrow(InputError);
  });

  it('accepts rounding-level asymmetry', () => {
    const nearlySymmetric = gaussian([0, 0], [2, 0.3, 0.3 + 1e-15, 1]);
    expect(bhattacharyyaDistance(nearlySymmetric, gaussian([0, 0], [2, 0.3, 0.3, 1]))).toBeCloseTo(0, 12);
  });
});

describe('minimum-cost assignment (Hungarian algorithm)', () => {
  it('solves the textbook three-by-three example at its known optimum of 27', () => {
    // Taha, Operations Research: An Introduction, the assignment model's opening example: three
    // children's bids for three chores (from memory). Known optimum: rows take columns 2, 1, 3
    // at 10 + 9 + 8 = 27. The enumeration below double-checks that optimum.
    const costs = costMatrixFromRows([
      [15, 10, 9],
      [9, 15, 10],
      [10, 12, 8],
    ]);
    expect(bruteForceMinimum(costs)).toBe(27);
    const assignment = minimumCostAssignment(costs);
    expectValidAssignment(assignment, costs);
    expect(assignment.totalCost).toBe(27);
    expect(assignment.pairs.map((pair) => pair.column)).toEqual([1, 0, 2]);
  });

  it('solves the example of scipy.optimize.linear_sum_assignment\'s documentation (total 5)', () => {
    // scipy documentation, linear_sum_assignment "Examples": cost [[4,1,3],[2,0,5],[3,2,2]],
    // col_ind [1, 0, 2], total 5 (checked with Debian's scipy 1.10.1).
    const costs = costMatrixFromRows([
      [4, 1, 3],
      [2, 0, 5],
      [3, 2, 2],
    ]);
    const assignment = minimumCostAssignment(costs);
    expect(assignment.pairs.map((pair) => pair.column)).toEqual([1, 0, 2]);
    expect(assignment.totalCost).toBe(5);
    expect(bruteForceMinimum(costs)).toBe(5);
  });

  it('agrees with brute force on seeded random square matrices up to 7 × 7', () => {
    const rng = xoroshiro128plus(20261202);
    for (let n = 1; n <= 7; n++) {
      for (let trial = 0; trial < 12; trial++) {
        const costs = randomCosts(rng, n, n, trial % 2 === 0);
        const assignment = minimumCostAssignment(costs);
        expectValidAssignment(assignment, costs);
        expect(assignment.totalCost).toBeCloseTo(bruteForceMinimum(costs), 9);
        expect(assignment.unmatchedRows).toEqual([]);
        expect(assignment.unmatchedColumns).toEqual([]);
      }
    }
  });

  it('agrees with brute force on seeded random rectangular matrices, both orientations', () => {
    const rng = xoroshiro128plus(7);
    for (let rows = 1; rows <= 7; rows++) {
      for (let cols = 1; cols <= 7; cols++) {
        if (rows === cols) continue;
        for (let trial = 0; trial < 3; trial++) {
          const costs = randomCosts(rng, rows, cols, trial === 0);
          const assignment = minimumCostAssignment(costs);
          expectValidAssignment(assignment, costs);
          expect(assignment.totalCost).toBeCloseTo(bruteForceMinimum(costs), 9);
          expect(assignment.unmatchedRows.length).toBe(Math.max(0, rows - cols));
          expect(assignment.unmatchedColumns.length).toBe(Math.max(0, cols - rows));
        }
      }
    }
  });

  it('matches scipy\'s linear_sum_assignment on the recorded larger matrices', () => {
    // Recorded by test/reference/record-sklearn.py with Debian's scipy (version in the JSON).
    const recorded = JSON.parse(readFileSync(new URL('../reference/sklearn-results.json', import.meta.url), 'utf8')) as {
      linearSumAssignment: { rows: number; cols: number; cost: number[][]; pairs: [number, number][]; totalCost: number }[];
    };
    expect(recorded.linearSumAssignment.length).toBeGreaterThanOrEqual(6);
    for (const example of recorded.linearSumAssignment) {
      const costs = costMatrixFromRows(example.cost);
      const assignment = minimumCostAssignment(costs);
      expectValidAssignment(assignment, costs);
      expect(assignment.totalCost).toBeCloseTo(example.totalCost, 9);
      // Continuous random costs have a unique optimum, so the pairs themselves agree too.
      expect(assignment.pairs.map((pair) => [pair.row, pair.column])).toEqual(example.pairs);
    }
  });

  it('reports unmatched rows and columns in a worked rectangular case', () => {
    // Two rows, four columns: row 0 is cheapest on column 3 (1), row 1 on column 1 (2): total 3,
    // columns 0 and 2 unmatched. Transposed, the same pairs with rows and columns swapped.
    const wide = costMatrixFromRows([
      [5, 6, 7, 1],
      [4, 2, 9, 3],
    ]);
    const assignment = minimumCostAssignment(wide);
    expect(assignment.pairs).toEqual([
      { row: 0, column: 3, cost: 1 },
      { row: 1, column: 1, cost: 2 },
    ]);
    expect(assignment.totalCost).toBe(3);
    expect(assignment.unmatchedColumns).toEqual([0, 2]);
    const tall = costMatrixFromRows([
      [5, 4],
      [6, 2],
      [7, 9],
      [1, 3],
    ]);
    const transposed = minimumCostAssignment(tall);
    expect(transposed.pairs).toEqual([
      { row: 1, column: 1, cost: 2 },
      { row: 3, column: 0, cost: 1 },
    ]);
    expect(transposed.unmatchedRows).toEqual([0, 2]);
    expect(transposed.unmatchedColumns).toEqual([]);
  });

  it('handles empty sides and negative costs', () => {
    expect(minimumCostAssignment({ values: new Float64Array(0), rows: 0, cols: 3 })).toEqual({
      pairs: [],
      totalCost: 0,
      unmatchedRows: [],
      unmatchedColumns: [0, 1, 2],
    });
    const negative = costMatrixFromRows([
      [-1, -5],
      [-3, -2],
    ]);
    expect(minimumCostAssignment(negative).totalCost).toBe(-8);
  });

  it('rejects malformed cost matrices', () => {
    expect(() => minimumCostAssignment(costMatrixFromRows([[1, Number.NaN]]))).toThrow(/entry \(0, 1\) is not a finite number/);
    expect(() => minimumCostAssignment({ values: new Float64Array(5), rows: 2, cols: 3 })).toThrow(/needs 6 values/);
    expect(() => costMatrixFromRows([[1, 2], [3]])).toThrow(/row 1 has 1 entries/);
    expect(() => minimumCostAssignment({ values: new Float64Array(0), rows: -1, cols: 0 })).toThrow(InputError);
  });
});

describe('matchComponents', () => {
  const parents = [
    gaussian([0, 0], [1, 0.2, 0.2, 1]),
    gaussian([5, 5], [2, 0, 0, 0.5]),
    gaussian([0, 6], [0.5, -0.1, -0.1, 0.8]),
  ];

  it('recovers a relabelled, slightly moved set of components', () => {
    // Children = parents in the order 2, 0, 1, each nudged a little.
    const children = [
      gaussian([0.1, 5.9], [0.55, -0.1, -0.1, 0.75]),
      gaussian([-0.1, 0.2], [1.1, 0.25, 0.25, 0.9]),
      gaussian([5.2, 4.9], [1.8, 0.1, 0.1, 0.6]),
    ];
    const matching = matchComponents(parents, children);
    expect(matching.pairs.map((pair) => [pair.parent, pair.child])).toEqual([
      [0, 1],
      [1, 2],
      [2, 0],
    ]);
    expect(matching.unmatchedParents).toEqual([]);
    expect(matching.unmatchedChildren).toEqual([]);
    for (const pair of matching.pairs) {
      expect(pair.distance).toBeCloseTo(bhattacharyyaDistance(parents[pair.parent], children[pair.child]), 14);
      expect(matching.distances.values[pair.parent * 3 + pair.child]).toBe(pair.distance);
    }
    expect(matching.totalDistance).toBeCloseTo(matching.pairs.reduce((sum, pair) => sum + pair.distance, 0), 14);
  });

  it('reports retired and new components when the counts differ', () => {
    const twoChildren = [parents[2], parents[0]];
    const fewer = matchComponents(parents, twoChildren);
    expect(fewer.pairs.map((pair) => [pair.parent, pair.child])).toEqual([
      [0, 1],
      [2, 0],
    ]);
    expect(fewer.unmatchedParents).toEqual([1]);
    expect(fewer.totalDistance).toBeCloseTo(0, 12);
    const more = matchComponents(twoChildren, parents);
    expect(more.unmatchedChildren).toEqual([1]);
    expect(more.pairs.map((pair) => [pair.parent, pair.child])).toEqual([
      [0, 2],
      [1, 0],
    ]);
  });

  it('reads the components of a fitted-model shape without copying', () => {
    const set = {
      components: 2,
      dimensions: 2,
      means: f64([0, 0, 5, 5]),
      covariances: f64([1, 0, 0, 1, 2, 0, 0, 2]),
    };
    const components = componentsOf(set);
    expect(components).toHaveLength(2);
    expect(Array.from(components[1].mean)).toEqual([5, 5]);
    expect(components[1].covariance.buffer).toBe(set.covariances.buffer);
    const matching = matchComponents(componentsOf(set), componentsOf({ ...set, means: f64([5, 5, 0, 0]) }));
    expect(matching.pairs.map((pair) => pair.child)).toEqual([1, 0]);
    expect(() => componentsOf({ ...set, means: f64([0, 0, 5]) })).toThrow(/needs 4 means/);
    expect(() => componentsOf({ ...set, means: [0, 0, 5, 5] as unknown as Float64Array })).toThrow(/Float64Arrays/);
  });

  it('names the offending component in its errors', () => {
    expect(() => matchComponents(parents, [gaussian([0, 0], [1, 3, 3, 1])])).toThrow(/child component 0: the covariance is not positive definite/);
    expect(() => matchComponents(parents, [gaussian([0, 0, 0], [1, 0, 0, 0, 1, 0, 0, 0, 1])])).toThrow(/same dimension/);
  });
});
