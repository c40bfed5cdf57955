import { randomUUID } from 'node:crypto';
import { InputError } from '../errors.js';
import { fromApiError, toApiError } from './api-errors.js';
import type {
  ApiError,
  CancelResult,
  LongTaskMethod,
  TaskEvent,
  TaskProgress,
  TaskResults,
  TaskStarted,
  TaskStatus,
} from './contract.js';

/** Reports one unit of progress; the task id is added by the manager. */
export type ProgressReporter = (progress: Omit<TaskProgress, 'taskId'>) => void;

/** The body of a long task: honours the signal, reports progress, resolves with the result. */
export type TaskBody<M extends LongTaskMethod> = (context: {
  signal: AbortSignal;
  onProgress: ProgressReporter;
}) => Promise<TaskResults[M]>;

interface TaskRecord {
  status: TaskStatus;
  controller: AbortController;
  body: TaskBody<LongTaskMethod>;
  settled: Promise<void>;
  settle: () => void;
}

/** Finished tasks kept for `taskStatus` after their events went out. */
const FINISHED_TASKS_KEPT = 200;

/**
 * Long tasks of one session: ids, a FIFO queue (one writer at a time on the database), an
 * AbortController per task, and the fan-out of progress and outcome events to every listener
 * (IPC windows, SSE clients, the CLI).
 */
export class TaskManager {
  private readonly tasks = new Map<string, TaskRecord>();
  private readonly queue: string[] = [];
  private readonly listeners = new Set<(event: TaskEvent) => void>();
  private runningTaskId: string | null = null;

  onEvent(listener: (event: TaskEvent) => void): () => void {
    this.listeners.add(listener);
    return () => this.listeners.delete(listener);
  }

  start<M extends LongTaskMethod>(method: M, body: TaskBody<M>): TaskStarted<M> {
    const taskId = randomUUID();
    let settle = () => {};
    const settled = new Promise<void>((resolve) => {
      settle = resolve;
    });
    this.tasks.set(taskId, {
      status: {
        taskId,
        method,
        state: 'queued',
        startedAt: new Date().toISOString(),
        finishedAt: null,
        progress: null,
        result: null,
        error: null,
      },
      controller: new AbortController(),
      body: body as TaskBody<LongTaskMethod>,
      settled,
      settle,
    });
    this.queue.push(taskId);
    // Start on the next turn so the caller has the id (and can subscribe) before any event.
    setImmediate(() => this.pump());
    return { taskId, method };
  }

  cancel(taskId: string): CancelResult {
    const record = this.require(taskId);
    const { state } = record.status;
    if (state !== 'queued' && state !== 'running') return { taskId, cancelled: false };
    record.controller.abort();
    if (state === 'queued') {
      this.queue.splice(this.queue.indexOf(taskId), 1);
      this.finish(record, 'cancelled', null, null);
    }
    return { taskId, cancelled: true };
  }

  /** The method of the task running now, if any. */
  running(): LongTaskMethod | null {
    return this.runningTaskId ? this.tasks.get(this.runningTaskId)!.status.method : null;
  }

  status(taskId: string): TaskStatus {
    return { ...this.require(taskId).status };
  }

  /** Resolves with the result once the task ends; rejects with its ApiError otherwise. */
  async wait<M extends LongTaskMethod>(started: TaskStarted<M>): Promise<TaskResults[M]> {
    const record = this.require(started.taskId);
    await record.settled;
    const { state, result, error } = record.status;
    if (state === 'done') return result as TaskResults[M];
    throw fromApiError(error ?? { kind: 'cancelled', message: 'Cancelled.' });
  }

  /** Cancels everything and waits for the running task to stop (window closing, host stopping). */
  async shutdown(): Promise<void> {
    const running = this.runningTaskId ? this.tasks.get(this.runningTaskId) : undefined;
    for (const taskId of [...this.queue]) this.cancel(taskId);
    if (running) {
      running.controller.abort();
      await running.settled;
    }
  }

  private require(taskId: string): TaskRecord {
    const record = this.tasks.get(taskId);
    if (!record) throw new InputError(`No task with id "${taskId}" (it may have finished long ago).`);
    return record;
  }

  private pump(): void {
    if (this.runningTaskId) return;
    const taskId = this.queue.shift();
    if (!taskId) return;
    const record = this.tasks.get(taskId)!;
    this.runningTaskId = taskId;
    record.status.state = 'running';
    const onProgress: ProgressReporter = (progress) => {
      if (record.status.state !== 'running') return;
      const event: TaskProgress = { taskId, ...progress };
      record.status.progress = event;
      this.emit({ type: 'progress', ...event });
    };
    let body: Promise<unknown>;
    try {
      body = record.body({ signal: record.controller.signal, onProgress });
    } catch (error) {
      body = Promise.reject(error);
    }
    body.then(
      (result) => {
        // A body that finished although cancel came late still counts as done: its work is kept.
        this.finish(record, 'done', result, null);
      },
      (error: unknown) => {
        const apiError = toApiError(error);
        this.finish(record, apiError.kind === 'cancelled' ? 'cancelled' : 'failed', null, apiError);
      },
    ).finally(() => {
      this.runningTaskId = null;
      this.pump();
    });
  }

  private finish(record: TaskRecord, state: 'done' | 'failed' | 'cancelled', result: unknown, error: ApiError | null): void {
    const { status } = record;
    status.state = state;
    status.finishedAt = new Date().toISOString();
    status.result = result;
    status.error = error;
    const { taskId, method } = status;
    if (state === 'done') this.emit({ type: 'done', taskId, method, result });
    else if (state === 'failed') this.emit({ type: 'failed', taskId, method, error: error! });
    else this.emit({ type: 'cancelled', taskId, method });
    record.settle();
    this.forgetOldTasks();
  }

  private forgetOldTasks(): void {
    const finished = [...this.tasks.values()].filter((record) => record.status.finishedAt !== null);
    for (const record of finished.slice(0, Math.max(0, finished.length - FINISHED_TASKS_KEPT))) {
      this.tasks.delete(record.status.taskId);
    }
  }

  private emit(event: TaskEvent): void {
    for (const listener of this.listeners) {
      try {
        listener(event);
      } catch {
        // One broken listener (a closed window, a dropped SSE client) must not starve the others.
      }
    }
  }
}
