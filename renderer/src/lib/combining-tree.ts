import type { CombiningLevelSummary } from '../../../src/api/contract.js';

/**
 * The combining tree of a run (levels from the K components down to one segment) laid out as a
 * dendrogram: leaves are components, each join sits at the entropy of the level its merge made.
 * Pure layout; the chart draws it (charts/combining-charts.ts).
 */
export interface TreeNode {
  /** Components under the node, ascending. */
  components: number[];
  /** Horizontal position: a leaf's slot (0 … K − 1), a join's the middle of its two children. */
  x: number;
  /** Entropy at which the node exists: the first level's for a leaf, its merge's level for a join. */
  y: number;
  /** Segments after the merge that made this node (K for a leaf). */
  segmentCount: number;
  children: [TreeNode, TreeNode] | null;
}

export interface TreeLayout {
  root: TreeNode;
  /** Components in left-to-right order (no crossing lines). */
  leafOrder: number[];
  /** Every join, in merge order (the first merge first). */
  joins: TreeNode[];
}

/**
 * Builds the tree from the levels: level l's `merged` pair are positions in level l − 1's groups,
 * the union taking the first position and later groups moving up one (as the contract says).
 * Throws on levels that do not describe one merge per level.
 */
export function layoutCombiningTree(levels: CombiningLevelSummary[]): TreeLayout {
  if (levels.length === 0) throw new RangeError('The combining hierarchy has no levels.');
  const first = levels[0];
  const components = first.groups.length;
  if (levels.length !== components) throw new RangeError(`A hierarchy of ${components} components needs ${components} levels, not ${levels.length}.`);
  type Building = { components: number[]; y: number; segmentCount: number; children: [Building, Building] | null };
  let nodes: Building[] = first.groups.map((group) => ({ components: [...group].sort((a, b) => a - b), y: first.entropy, segmentCount: components, children: null }));
  const joinsInOrder: Building[] = [];
  for (let l = 1; l < levels.length; l++) {
    const level = levels[l];
    if (!level.merged) throw new RangeError(`Level ${l} (${level.segmentCount} segments) does not say which groups merged.`);
    const [a, b] = level.merged;
    if (!(a >= 0 && a < b && b < nodes.length)) throw new RangeError(`Level ${l} merges positions ${a} and ${b} of ${nodes.length} groups.`);
    const join: Building = {
      components: [...nodes[a].components, ...nodes[b].components].sort((p, q) => p - q),
      y: level.entropy,
      segmentCount: level.segmentCount,
      children: [nodes[a], nodes[b]],
    };
    joinsInOrder.push(join);
    nodes = nodes.map((node, position) => (position === a ? join : node)).filter((_, position) => position !== b);
  }
  const leafOrder: number[] = [];
  const place = (node: Building): TreeNode => {
    if (!node.children) {
      const x = leafOrder.length;
      leafOrder.push(node.components[0]);
      return { ...node, x, children: null };
    }
    const left = place(node.children[0]);
    const right = place(node.children[1]);
    return { ...node, x: (left.x + right.x) / 2, children: [left, right] };
  };
  const placed = new Map<Building, TreeNode>();
  const root = place(nodes[0]);
  const walk = (built: Building, laid: TreeNode) => {
    placed.set(built, laid);
    if (built.children && laid.children) {
      walk(built.children[0], laid.children[0]);
      walk(built.children[1], laid.children[1]);
    }
  };
  walk(nodes[0], root);
  return { root, leafOrder, joins: joinsInOrder.map((join) => placed.get(join)!) };
}

/** The segment whose components hold all of `components`, or null when they span several. */
export function segmentHolding(components: number[], segments: { segment: number; components: number[] }[]): number | null {
  for (const segment of segments) {
    const inside = new Set(segment.components);
    if (components.every((component) => inside.has(component))) return segment.segment;
  }
  return null;
}

/**
 * The entropy curve's points: by number of segments, or against the cumulative count of
 * customers merged, counted from one segment up (0 at one segment; each further level adds the
 * customers its own merge moved) as the normalised curve of the method.
 */
export function entropyCurve(levels: CombiningLevelSummary[], against: 'segments' | 'merged'): { segmentCount: number; x: number; entropy: number }[] {
  const fromOne = [...levels].sort((a, b) => a.segmentCount - b.segmentCount);
  let merged = 0;
  return fromOne.map((level, i) => {
    if (i > 0) merged += fromOne[i - 1].mergedRows;
    return { segmentCount: level.segmentCount, x: against === 'segments' ? level.segmentCount : merged, entropy: level.entropy };
  });
}
