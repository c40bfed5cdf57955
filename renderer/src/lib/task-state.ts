import type { ApiError, TaskProgress } from '../../../src/api/contract.js';

/** What a progress panel shows for one long task (import, run, export, demo). */
export type TaskView<R> =
  | { state: 'idle' }
  | { state: 'starting' }
  | { state: 'running'; taskId: string; progress: TaskProgress | null; cancelling: boolean }
  | { state: 'done'; result: R }
  | { state: 'failed'; error: ApiError }
  | { state: 'cancelled' };

export type TaskAction<R> =
  | { type: 'start' }
  | { type: 'started'; taskId: string }
  | { type: 'progress'; progress: TaskProgress }
  | { type: 'cancel-requested' }
  | { type: 'done'; result: R }
  | { type: 'failed'; error: ApiError }
  | { type: 'cancelled' }
  | { type: 'dismiss' };

/** Pure transitions; events for another task id or after the end are ignored. */
export function taskReducer<R>(view: TaskView<R>, action: TaskAction<R>): TaskView<R> {
  switch (action.type) {
    case 'start':
      return view.state === 'starting' || view.state === 'running' ? view : { state: 'starting' };
    case 'started':
      return view.state === 'starting' ? { state: 'running', taskId: action.taskId, progress: null, cancelling: false } : view;
    case 'progress':
      return view.state === 'running' && action.progress.taskId === view.taskId ? { ...view, progress: action.progress } : view;
    case 'cancel-requested':
      return view.state === 'running' ? { ...view, cancelling: true } : view;
    case 'done':
      return view.state === 'running' || view.state === 'starting' ? { state: 'done', result: action.result } : view;
    case 'failed':
      return view.state === 'running' || view.state === 'starting' ? { state: 'failed', error: action.error } : view;
    case 'cancelled':
      return view.state === 'running' || view.state === 'starting' ? { state: 'cancelled' } : view;
    case 'dismiss':
      return view.state === 'running' || view.state === 'starting' ? view : { state: 'idle' };
  }
}

/** Share of the phase done, in [0, 1], or null when the total is not known (indeterminate bar). */
export function progressFraction(progress: TaskProgress | null): number | null {
  if (!progress || progress.total === null || progress.total <= 0) return null;
  return Math.min(1, Math.max(0, progress.done / progress.total));
}

/** An ApiError from whatever a transport rejected with. */
export function toApiError(error: unknown): ApiError {
  if (error && typeof error === 'object') {
    const candidate = error as Partial<ApiError> & { message?: unknown };
    const kind = candidate.kind === 'input' || candidate.kind === 'cancelled' ? candidate.kind : 'internal';
    const message = typeof candidate.message === 'string' ? candidate.message : String(error);
    const details = candidate.details && typeof candidate.details === 'object' ? candidate.details : undefined;
    return { kind, message, issues: Array.isArray(candidate.issues) ? candidate.issues : undefined, ...(details ? { details } : {}) };
  }
  return { kind: 'internal', message: String(error) };
}
