/**
 * Which segmentation a run takes (DESIGN.md §5), and the combining hierarchy as stored with the
 * run for the screens. The hierarchy comes from the engine (src/model/combining.ts, Baudry et
 * al. 2010 as mclust's clustCombi computes it); this module only chooses among its levels:
 * - an explicit grouping of component indices (settings.segmentation, what a month repeated after
 *   hand edits gives): 'hand';
 * - a number of segments: that level of the hierarchy, 'level';
 * - auto: merge while the merged customers are unsure between the two groups, stopping where the
 *   normalised entropy curve flattens (AMBIGUOUS_MERGE_NATS below), 'auto';
 * - a rescore keeps the parent's grouping and how it was chosen.
 */
import type { CombiningLevelSummary, SegmentationMethod } from '../api/contract.js';
import { checkSegmentation, segmentationAtLevel, segmentsWhileAmbiguous, type CombiningHierarchy, type Segmentation } from '../model/index.js';
import { componentsKey } from './carry-keys.js';
import type { StoredSegmentation } from './types.js';

/**
 * Auto merges two groups only while the customers they hold lose at least this much entropy each,
 * on average, by the merge: 0.2 nats is what a 95 / 5 split between the two groups loses
 * (−0.95 ln 0.95 − 0.05 ln 0.05 = 0.199). Merges of groups the customers already tell apart better
 * than that join different behaviour, and are left to the analyst. Our choice, measured on the demo
 * chain and five seeds of the second test chain (README, "Segments"): the least-squares change point
 * of the same curve (Baudry et al. 2010, mclust's clustCombiOptim) merged distinct spend tiers on
 * all of them.
 */
export const AMBIGUOUS_MERGE_NATS = 0.2;

/** What picking a level needs of a hierarchy: the engine's, or one stored with a run (`storedHierarchy`). */
export interface LevelledHierarchy {
  components: number;
  levels: readonly (Pick<CombiningLevelSummary, 'segmentCount' | 'entropy' | 'mergedRows'> & { segmentation: Segmentation })[];
}

/** A run's stored level summaries as a hierarchy to pick levels from again, without recombining its posteriors. */
export function storedHierarchy(components: number, levels: readonly CombiningLevelSummary[]): LevelledHierarchy {
  return { components, levels: levels.map((level) => ({ ...level, segmentation: { components, segments: level.groups } })) };
}

/** The number of segments auto gives for a hierarchy. */
export function autoSegmentCount(hierarchy: LevelledHierarchy): number {
  return segmentsWhileAmbiguous(hierarchy, AMBIGUOUS_MERGE_NATS);
}

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
export function chosenSegmentation(hierarchy: LevelledHierarchy, choice: SegmentationChoice): { segmentation: Segmentation; method: SegmentationMethod } {
  if (choice.segmentation) {
    const segmentation = { components: hierarchy.components, segments: choice.segmentation.map((group) => [...group].sort((a, b) => a - b)) };
    checkSegmentation(segmentation);
    return { segmentation, method: 'hand' };
  }
  if (choice.segmentCount === 'auto') return { segmentation: segmentationAtLevel(hierarchy, autoSegmentCount(hierarchy)), method: 'auto' };
  return { segmentation: segmentationAtLevel(hierarchy, choice.segmentCount), method: 'level' };
}

/** What the run row stores: the grouping, how it was chosen, and the hierarchy summary. */
export function storedSegmentation(hierarchy: CombiningHierarchy, segmentation: Segmentation, method: SegmentationMethod): StoredSegmentation & { levels: CombiningLevelSummary[] } {
  return {
    method,
    segments: segmentation.segments.map((group) => [...group]),
    autoSegmentCount: autoSegmentCount(hierarchy),
    autoSegmentCountByMergedRows: hierarchy.chosenSegmentsByMergedRows,
    levels: levelsOf(hierarchy),
  };
}

/** The segment count of the level whose grouping equals this one (order of groups aside), or null. */
export function levelOfGrouping(levels: readonly CombiningLevelSummary[], segments: readonly (readonly number[])[]): number | null {
  const canonical = (groups: readonly (readonly number[])[]) => groups.map(componentsKey).sort().join(';');
  const wanted = canonical(segments);
  return levels.find((level) => canonical(level.groups) === wanted)?.segmentCount ?? null;
}
