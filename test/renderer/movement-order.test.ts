import { describe, expect, it } from 'vitest';
import type { MovementResult } from '../../src/api/contract.js';
import { orderMovement, stayedCount } from '../../renderer/src/lib/movement-order.js';

// Parent segments in model order 0 = Tier 2, 1 = Tier 1; current in model order 0 = Tier 1, 1 = Tier 2, 2 = new.
const movement: MovementResult = {
  runId: 2, parentRunId: 1,
  parentSegments: [{ segment: 0, key: 'S2', name: 'Tier 2' }, { segment: 1, key: 'S1', name: 'Tier 1' }],
  currentSegments: [{ segment: 0, key: 'S1', name: 'Weekly big baskets' }, { segment: 1, key: 'S2', name: 'Tier 2' }, { segment: 2, key: 'S3', name: 'Tier 3' }],
  matrix: [
    [3, 40, 5],
    [20, 2, 0],
  ],
  common: 70, entered: 0, left: 0, stability: 0.5, warnings: [], retired: [], added: ['Tier 3'],
};
const parentRank = (segment: number) => [2, 1][segment];
const currentRank = (segment: number) => [1, 2, 3][segment];

describe('movement ordering', () => {
  it('puts both axes in spend order, permuting the matrix with them', () => {
    const ordered = orderMovement(movement, parentRank, currentRank);
    expect(ordered.parentSegments.map((s) => s.name)).toEqual(['Tier 1', 'Tier 2']);
    expect(ordered.currentSegments.map((s) => s.name)).toEqual(['Weekly big baskets', 'Tier 2', 'Tier 3']);
    expect(ordered.matrix).toEqual([
      [20, 2, 0],
      [3, 40, 5],
    ]);
    expect(ordered.matrix.flat().reduce((a, b) => a + b, 0)).toBe(movement.common);
  });

  it('counts stayers by segment key, so a renamed segment still counts as the same', () => {
    const parentKey = (segment: number) => ['s2', 's1'][segment];
    const currentKey = (segment: number) => ['s1', 's2', 's3'][segment];
    // Tier 1 (s1) → Weekly big baskets (s1): 20; Tier 2 (s2) → Tier 2 (s2): 40.
    expect(stayedCount(movement, parentKey, currentKey)).toBe(60);
    expect(stayedCount(orderMovement(movement, parentRank, currentRank), parentKey, currentKey)).toBe(60);
    expect(stayedCount(movement, () => undefined, currentKey)).toBe(0);
  });
});
