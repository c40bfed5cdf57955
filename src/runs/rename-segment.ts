/** Segment names: the analyst renames a segment; names are unique within a run and carry over by key. */
import type { Database } from 'better-sqlite3';
import type { RenameSegmentInput, SegmentProfile } from '../api/contract.js';
import { InputError } from '../errors.js';
import { runSegments } from './read/run-segments.js';
import { segmentProfile } from './read/segments.js';
import { storedRun } from './read/stored-run.js';

/** Renames a segment (by index, key or current name); returns its profile under the new name. */
export function renameSegment(db: Database, input: RenameSegmentInput): SegmentProfile {
  const { runId, name } = input;
  storedRun(db, runId);
  const segments = runSegments(db, runId);
  const target = segments.find(input.segment);
  const clash = segments.list.find((segment) => segment.name === name && segment.index !== target.index);
  if (clash) throw new InputError(`Run ${runId} already has a segment named "${name}" (segment ${clash.index}); pick another name.`);
  // The name is the analyst's own (and carries over by key) unless it is the trait-built default again.
  db.prepare('UPDATE run_segments SET name = ?, renamed = (? <> default_name) WHERE run_id = ? AND segment_index = ?').run(name, name, runId, target.index);
  return segmentProfile(db, runId, target.index);
}
