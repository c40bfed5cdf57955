import type { StatisticsMode } from './kernel.js';
import type { ResolvedFitOptions } from './validate.js';
import type { FitProgress, MixtureModel } from './types.js';

/** Handed to every worker at start: the data matrix in shared memory (n × d, row-major). */
export interface WorkerData {
  values: Float64Array;
  rows: number;
  cols: number;
  anyMissing: boolean;
}

export type WorkerRequest =
  /** Restarts run one after another on one thread (so they share its cached k-means starts); the result is RestartOutcome[]. */
  | { type: 'restarts'; id: number; runs: { options: ResolvedFitOptions; restart: number }[] }
  | { type: 'expectation'; id: number; model: MixtureModel; statistics: StatisticsMode; firstChunk: number; lastChunk: number };

export type WorkerReply =
  | { type: 'progress'; id: number; progress: FitProgress }
  | { type: 'done'; id: number; result: unknown }
  | { type: 'failed'; id: number; name: string; message: string };
