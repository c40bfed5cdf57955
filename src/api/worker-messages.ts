import type { ApiError, TaskProgress } from './contract.js';

/** Messages between a long task's worker thread and the session that started it. */
export type WorkerToParent =
  | { type: 'progress'; progress: Omit<TaskProgress, 'taskId'> }
  | { type: 'done'; result: unknown }
  | { type: 'failed'; error: ApiError };

export type ParentToWorker = { type: 'cancel' };
