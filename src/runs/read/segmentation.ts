/**
 * How a run's components are combined into its segments (the Model screen's combining tree and
 * entropy curve, `segments … tree`): the grouping now, how it was chosen, and every level of the
 * combining hierarchy. Runs stored before segments were made of components have no stored
 * hierarchy: it is worked out from their component posteriors on first use and kept with the run.
 */
import type { Database } from 'better-sqlite3';
import type { CombiningLevelSummary, RunSegmentation } from '../../api/contract.js';
import { combineComponents } from '../../model/index.js';
import { levelOfGrouping, storedSegmentation } from '../combine.js';
import { loadPlacement } from '../stored-placement.js';
import type { StoredSegmentation } from '../types.js';
import { runSegments } from './run-segments.js';
import { derivedFromRun, storedRun } from './stored-run.js';

/** The run's stored segmentation with its hierarchy (worked out once for runs stored without one). */
export function withHierarchy(db: Database, runId: number, stored: StoredSegmentation): StoredSegmentation & { levels: CombiningLevelSummary[] } {
  if (stored.levels !== null) return { ...stored, levels: stored.levels };
  return derivedFromRun(db, runId, 'combining hierarchy', () => {
    const { placed } = loadPlacement(db, runId);
    const hierarchy = combineComponents(placed.posteriors, placed.customerIds.length, placed.components);
    return storedSegmentation(hierarchy, { components: placed.components, segments: stored.segments }, stored.method);
  });
}

export function segmentationOf(db: Database, runId: number): RunSegmentation {
  const run = storedRun(db, runId);
  const stored = withHierarchy(db, runId, run.segmentation);
  const segments = runSegments(db, runId).list;
  const { levels } = stored;
  return {
    runId,
    components: run.k,
    covariance: run.covariance,
    method: stored.method,
    segmentCount: stored.segments.length,
    autoSegmentCount: stored.autoSegmentCount ?? run.k,
    autoSegmentCountByMergedRows: stored.autoSegmentCountByMergedRows ?? run.k,
    segments: segments.map(({ index, key, name, components, customers }) => ({ segment: index, key, name, components, customers })),
    levels,
    currentLevel: levelOfGrouping(levels, stored.segments),
  };
}
