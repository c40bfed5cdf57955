import type { MovementResult } from '../../../src/api/contract.js';

/**
 * The movement matrix with both axes in the order given (spend rank, so Tier 1 comes first on
 * either side), rows and columns permuted together with their segment lists.
 */
export function orderMovement(movement: MovementResult, parentRank: (segment: number) => number, currentRank: (segment: number) => number): MovementResult {
  const rows = movement.parentSegments.map((_, i) => i).sort((a, b) => parentRank(movement.parentSegments[a].segment) - parentRank(movement.parentSegments[b].segment));
  const columns = movement.currentSegments.map((_, j) => j).sort((a, b) => currentRank(movement.currentSegments[a].segment) - currentRank(movement.currentSegments[b].segment));
  return {
    ...movement,
    parentSegments: rows.map((i) => movement.parentSegments[i]),
    currentSegments: columns.map((j) => movement.currentSegments[j]),
    matrix: rows.map((i) => columns.map((j) => movement.matrix[i][j])),
  };
}

/**
 * Customers in both runs who stayed in the same segment, where "same" is the segment key the
 * core carries across months by matching (names can be changed, keys cannot).
 */
export function stayedCount(movement: MovementResult, parentKey: (segment: number) => string | undefined, currentKey: (segment: number) => string | undefined): number {
  let stayed = 0;
  movement.matrix.forEach((row, i) =>
    row.forEach((count, j) => {
      const key = parentKey(movement.parentSegments[i].segment);
      if (key !== undefined && key === currentKey(movement.currentSegments[j].segment)) stayed += count;
    }),
  );
  return stayed;
}
