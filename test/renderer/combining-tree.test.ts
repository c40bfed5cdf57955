import { describe, expect, it } from 'vitest';
import type { CombiningLevelSummary } from '../../src/api/contract.js';
import { entropyCurve, layoutCombiningTree, segmentHolding } from '../../renderer/src/lib/combining-tree.js';

/**
 * Four components combined one merge per level, as the contract describes `merged`: positions in
 * the previous level's groups, the union taking the first position, later groups moving up.
 * Level 1 joins components 1 and 3; level 2 joins position 0 (component 0) with position 2
 * (component 2); level 3 joins the two groups left.
 */
const levels: CombiningLevelSummary[] = [
  { segmentCount: 4, entropy: 900, mergedRows: 0, merged: null, groups: [[0], [1], [2], [3]] },
  { segmentCount: 3, entropy: 400, mergedRows: 120, merged: [1, 3], groups: [[0], [1, 3], [2]] },
  { segmentCount: 2, entropy: 150, mergedRows: 300, merged: [0, 2], groups: [[0, 2], [1, 3]] },
  { segmentCount: 1, entropy: 0, mergedRows: 700, merged: [0, 1], groups: [[0, 1, 2, 3]] },
];

describe('combining tree', () => {
  it('joins the groups each level names, in level order, at that level\'s entropy', () => {
    const { joins, root, leafOrder } = layoutCombiningTree(levels);
    expect(joins.map((join) => [join.components, join.y, join.segmentCount])).toEqual([
      [[1, 3], 400, 3],
      [[0, 2], 150, 2],
      [[0, 1, 2, 3], 0, 1],
    ]);
    expect(root.components).toEqual([0, 1, 2, 3]);
    // Leaves of one join sit side by side, so no lines cross.
    expect(leafOrder).toEqual([0, 2, 1, 3]);
    expect(joins.map((join) => join.x)).toEqual([2.5, 0.5, 1.5]);
    // Every level's groups are what the layout's joins make of the previous level.
    expect(levels.map((level) => level.groups.map((group) => [...group].sort()).sort())).toEqual([
      [[0], [1], [2], [3]],
      [[0], [1, 3], [2]],
      [[0, 2], [1, 3]],
      [[0, 1, 2, 3]],
    ]);
  });

  it('refuses levels that do not describe one merge each', () => {
    expect(() => layoutCombiningTree(levels.slice(0, 3))).toThrow(/4 levels/);
    expect(() => layoutCombiningTree([levels[0], { ...levels[1], merged: [3, 1] }, levels[2], levels[3]])).toThrow(/positions 3 and 1/);
    expect(() => layoutCombiningTree([levels[0], { ...levels[1], merged: null }, levels[2], levels[3]])).toThrow(/does not say/);
  });

  it('finds the segment holding a join, none for a join across segments', () => {
    const segments = [{ segment: 0, components: [0, 2] }, { segment: 1, components: [1, 3] }];
    expect(segmentHolding([1, 3], segments)).toBe(1);
    expect(segmentHolding([0, 1, 2, 3], segments)).toBeNull();
  });

  it('draws the normalised curve against customers merged, counted from one segment up', () => {
    expect(entropyCurve(levels, 'segments').map((p) => [p.x, p.entropy])).toEqual([[1, 0], [2, 150], [3, 400], [4, 900]]);
    // From one segment up: 0 at one segment; each level adds the customers its own merge moved.
    expect(entropyCurve(levels, 'merged').map((p) => [p.segmentCount, p.x])).toEqual([[1, 0], [2, 700], [3, 1000], [4, 1120]]);
  });
});
