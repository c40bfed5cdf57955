import { z } from 'zod';
import { named, nonEmpty } from './fields.js';
import type { LongTaskMethod } from './methods.js';

/**
 * Long work (import, run, export, demo) returns `{ taskId }` at once; the work then streams
 * `TaskEvent`s — progress `{taskId, phase, done, total, message}` and finally one `done` (with the
 * method's result), `failed` (with an `ApiError`) or `cancelled` event. `cancelTask` stops it.
 */

/** Returned at once by every long task; its events carry the same id. */
export interface TaskStarted<M extends LongTaskMethod = LongTaskMethod> {
  taskId: string;
  method: M;
}

/** Long tasks run one at a time per database (one writer): later ones wait as `queued`. */
export type TaskState = 'queued' | 'running' | 'done' | 'failed' | 'cancelled';

export interface TaskProgress {
  taskId: string;
  /** What the task is doing now, e.g. "reading", "fit", "writing customers". */
  phase: string;
  done: number;
  /** Total units of the phase, or null when not known in advance. */
  total: number | null;
  message: string;
}

export interface ApiError {
  /** input: the caller must change something; cancelled: stopped on request; internal: a bug or I/O failure. */
  kind: 'input' | 'cancelled' | 'internal';
  message: string;
  /** Zod issues for malformed input: the field path (dots) and what is wrong with it. */
  issues?: { path: string; message: string }[];
  details?: Record<string, unknown>;
}

export type TaskEvent =
  | ({ type: 'progress' } & TaskProgress)
  | { type: 'done'; taskId: string; method: LongTaskMethod; result: unknown }
  | { type: 'failed'; taskId: string; method: LongTaskMethod; error: ApiError }
  | { type: 'cancelled'; taskId: string; method: LongTaskMethod };

export interface TaskStatus {
  taskId: string;
  method: LongTaskMethod;
  state: TaskState;
  startedAt: string;
  finishedAt: string | null;
  progress: TaskProgress | null;
  /** The method's result once `state` is done (see `TaskResults`). */
  result: unknown;
  error: ApiError | null;
}

export const taskInput = z.strictObject({ taskId: named(nonEmpty, 'the task') });
export interface CancelResult {
  taskId: string;
  /** False when the task had already finished. */
  cancelled: boolean;
}
