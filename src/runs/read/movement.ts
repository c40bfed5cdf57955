/** The Movement screen: the run against its parent, with segment names as they are now. */
import type { Database } from 'better-sqlite3';
import type { MovementResult } from '../../api/contract.js';
import type { StoredMovement } from '../movement.js';
import { runSegments } from './run-segments.js';
import { storedRun } from './stored-run.js';

/** Movement against the parent; for a first run, the run's segments and everything else empty. */
export function movementOf(db: Database, runId: number): MovementResult {
  const run = storedRun(db, runId);
  const current = runSegments(db, runId);
  const stored = db.prepare('SELECT movement FROM runs WHERE run_id = ?').pluck().get(runId) as string | null;
  if (stored === null || run.parentRunId === null) {
    return {
      runId,
      parentRunId: null,
      parentSegments: [],
      currentSegments: [...current.list].sort((a, b) => a.spendRank - b.spendRank).map(({ index, key, name }) => ({ segment: index, key, name })),
      matrix: [],
      common: 0,
      entered: 0,
      left: 0,
      stability: null,
      warnings: [],
      retired: [],
      added: [],
    };
  }
  const movement = JSON.parse(stored) as StoredMovement;
  // Names may have changed since the run was stored: read them fresh by key.
  const parentNames = runSegments(db, run.parentRunId).nameOfKey;
  const named =
    (names: ReadonlyMap<string, string>) =>
    ({ index, key, name }: { index: number; key: string; name: string }) => ({ segment: index, key, name: names.get(key) ?? name });
  const nameNow = (names: ReadonlyMap<string, string>) => (segment: { key: string; name: string }) => names.get(segment.key) ?? segment.name;
  return {
    runId,
    parentRunId: movement.parentRunId,
    parentSegments: movement.parentSegments.map(named(parentNames)),
    currentSegments: movement.currentSegments.map(named(current.nameOfKey)),
    matrix: movement.counts,
    common: movement.common,
    entered: movement.entered,
    left: movement.left,
    stability: movement.adjustedRandIndex,
    warnings: movement.warnings.map((warning) => ({ ...warning, segmentName: current.nameOfKey.get(warning.segmentKey) ?? warning.segmentName })),
    retired: movement.retired.map(nameNow(parentNames)),
    added: movement.added.map(nameNow(current.nameOfKey)),
  };
}
