/**
 * Which segmentation a run takes (DESIGN.md §5), and the combining hierarchy as stored with the
 * run for the screens. The hierarchy comes from the engine (src/model/combining.ts, Baudry et
 * al. 2010 as mclust's clustCombi computes it); this module only chooses among its levels:
 * - an explicit grouping of component indices (settings.segmentation, what a month repeated after
 *   hand edits gives): 'hand';
 * - a number of segments: that level of the hierarchy, 'level';
 * - auto: the level at the entropy curve's change point, 'auto';
 * - a rescore keeps the parent's grouping and how it was chosen.
 */
import type { CombiningLevelSummary, SegmentationMethod } from '../api/contract.js';
import { checkSegmentation, segmentationAtLevel, type CombiningHierarchy, type Segmentation } from '../model/index.js';
import type { StoredSegmentation } from './types.js';

/** The hierarchy's levels as the screens draw them (tree and entropy curve). */
export function levelsOf(hierarchy: CombiningHierarchy): CombiningLevelSummary[] {
  return hierarchy.levels.map((level) => ({
    segmentCount: level.segmentCount,
    entropy: level.entropy,
    mergedRows: level.mergedRows,
    merged: level.merged,
    groups: level.segmentation.segments.map((group) => [...group]),
  }));
}

export interface SegmentationChoice {
  segmentCount: number | 'auto';
  segmentation?: number[][] | null;
}

/** The segmentation a setting asks for, checked against the model's K components (InputError naming what is wrong). */
export function chosenSegmentation(hierarchy: CombiningHierarchy, choice: SegmentationChoice): { segmentation: Segmentation; method: SegmentationMethod } {
  if (choice.segmentation) {
    const segmentation = { components: hierarchy.components, segments: choice.segmentation.map((group) => [...group].sort((a, b) => a - b)) };
    checkSegmentation(segmentation);
    return { segmentation, method: 'hand' };
  }
  if (choice.segmentCount === 'auto') return { segmentation: segmentationAtLevel(hierarchy, hierarchy.chosenSegments), method: 'auto' };
  return { segmentation: segmentationAtLevel(hierarchy, choice.segmentCount), method: 'level' };
}

/** What the run row stores: the grouping, how it was chosen, and the hierarchy summary. */
export function storedSegmentation(hierarchy: CombiningHierarchy, segmentation: Segmentation, method: SegmentationMethod): StoredSegmentation {
  return {
    method,
    segments: segmentation.segments.map((group) => [...group]),
    autoSegmentCount: hierarchy.chosenSegments,
    autoSegmentCountByMergedRows: hierarchy.chosenSegmentsByMergedRows,
    levels: levelsOf(hierarchy),
  };
}

/** The segment count of the level whose grouping equals this one (order of groups aside), or null. */
export function levelOfGrouping(levels: readonly CombiningLevelSummary[], segments: readonly (readonly number[])[]): number | null {
  const canonical = (groups: readonly (readonly number[])[]) => groups.map((group) => [...group].sort((a, b) => a - b).join(',')).sort().join(';');
  const wanted = canonical(segments);
  return levels.find((level) => canonical(level.groups) === wanted)?.segmentCount ?? null;
}
