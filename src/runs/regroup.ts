/**
 * Changing a stored run's segmentation in place (a level of the combining hierarchy, a merge, a
 * split): segment memberships re-summed from the stored component posteriors, then flags, the
 * review queue, names, profiles, movement and stability, in one transaction.
 */
import type { Database } from 'better-sqlite3';
import type { RegroupResult, RegroupSegmentsInput } from '../api/contract.js';

export interface RegroupProgress {
  phase: 'read' | 'combine' | 'store';
  done: number;
  total: number;
  message: string;
}

export interface RegroupOptions {
  signal?: AbortSignal;
  onProgress?: (progress: RegroupProgress) => void;
}

export async function regroupSegments(_db: Database, _input: RegroupSegmentsInput, _options: RegroupOptions = {}): Promise<RegroupResult> {
  throw new Error('Regrouping is being built.');
}
