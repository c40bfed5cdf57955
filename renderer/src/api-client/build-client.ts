import type {
  Api,
  ApiMethod,
  CallOutcome,
  LongTaskMethod,
  SpendmixClient,
  SpendmixShell,
  TaskEvent,
  TaskProgress,
  TaskResults,
  TaskStarted,
} from '../../../src/api/contract.js';
import { ApiCallError } from './api-call-error.js';

/** What a transport supplies; everything else of the client is the same on both. */
export interface Transport {
  call(method: ApiMethod, input: unknown): Promise<CallOutcome>;
  /** Subscribes to task events; returns the unsubscribe function. */
  subscribe(listener: (event: TaskEvent) => void): () => void;
  shell: SpendmixShell;
}

/**
 * Builds the screens' client over one transport: the typed `Api` (each method one call whose
 * failure rejects with an ApiCallError), task events, and `waitForTask`.
 */
export function buildClient(transport: Transport): SpendmixClient {
  const api = new Proxy({} as Api, {
    get(_target, method) {
      if (typeof method !== 'string') return undefined;
      return async (input: unknown) => {
        const outcome = await transport.call(method as ApiMethod, input ?? {});
        if (!outcome.ok) throw new ApiCallError(outcome.error);
        return outcome.value;
      };
    },
  });

  const listeners = new Set<(event: TaskEvent) => void>();
  // Events of tasks that finished before anyone waited for them (a very quick import).
  const finished = new Map<string, TaskEvent>();
  transport.subscribe((event) => {
    if (event.type !== 'progress') {
      finished.set(event.taskId, event);
      if (finished.size > 100) finished.delete(finished.keys().next().value!);
    }
    for (const listener of listeners) listener(event);
  });

  const onTaskEvent = (listener: (event: TaskEvent) => void) => {
    listeners.add(listener);
    return () => {
      listeners.delete(listener);
    };
  };

  const settle = <M extends LongTaskMethod>(event: TaskEvent): TaskResults[M] => {
    if (event.type === 'done') return event.result as TaskResults[M];
    if (event.type === 'failed') throw new ApiCallError(event.error);
    throw new ApiCallError({ kind: 'cancelled', message: 'Cancelled.' });
  };

  const waitForTask = <M extends LongTaskMethod>(started: TaskStarted<M>, onProgress?: (progress: TaskProgress) => void) =>
    new Promise<TaskResults[M]>((resolve, reject) => {
      const finish = (event: TaskEvent) => {
        unsubscribe();
        try {
          resolve(settle<M>(event));
        } catch (error) {
          reject(error);
        }
      };
      const unsubscribe = onTaskEvent((event) => {
        if (event.taskId !== started.taskId) return;
        if (event.type === 'progress') onProgress?.(event);
        else finish(event);
      });
      const early = finished.get(started.taskId);
      if (early) return finish(early);
      // The event stream may have (re)connected after the end: ask once for the stored outcome.
      api.taskStatus({ taskId: started.taskId }).then(
        (status) => {
          if (status.state === 'done') finish({ type: 'done', taskId: status.taskId, method: status.method, result: status.result });
          else if (status.state === 'failed' && status.error) finish({ type: 'failed', taskId: status.taskId, method: status.method, error: status.error });
          else if (status.state === 'cancelled') finish({ type: 'cancelled', taskId: status.taskId, method: status.method });
          else if (status.progress) onProgress?.(status.progress);
        },
        () => undefined,
      );
    });

  return { api, shell: transport.shell, onTaskEvent, waitForTask };
}
