/** How a run's components are combined into its segments, with the combining hierarchy (the Model screen's tree and entropy curve). */
import type { Database } from 'better-sqlite3';
import type { RunSegmentation } from '../../api/contract.js';

export function segmentationOf(_db: Database, _runId: number): RunSegmentation {
  throw new Error('The segmentation read is being built.');
}
