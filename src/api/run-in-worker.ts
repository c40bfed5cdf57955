import { CancelledError } from '../errors.js';
import { fromApiError } from './api-errors.js';
import type { LongTaskMethod, TaskResults } from './contract.js';
import type { LongTaskRequest } from './long-task-request.js';
import { startWorker } from '../workers/start-worker.js';
import type { ProgressReporter } from './tasks.js';
import type { ParentToWorker, WorkerToParent } from './worker-messages.js';

/** After a cancel, how long the worker may take to stop by itself before it is terminated. */
const CANCEL_GRACE_MS = 10_000;

/**
 * Runs one long task on its own worker thread so the Electron main process and the host's event
 * loop stay free. Cancel asks the worker to abort (the core then rolls back); if it does not stop
 * within the grace period the thread is terminated — safe because every write is one transaction.
 */
export function runInWorker<M extends LongTaskMethod>(
  request: LongTaskRequest<M>,
  context: { signal: AbortSignal; onProgress: ProgressReporter },
): Promise<TaskResults[M]> {
  return new Promise((resolve, reject) => {
    // Starting a thread (and, from source, its TypeScript loader) takes a moment: say so at once.
    context.onProgress({ phase: 'starting', done: 0, total: null, message: 'Starting a worker thread' });
    const worker = startWorker(new URL(`./task-worker${import.meta.url.endsWith('.ts') ? '.ts' : '.js'}`, import.meta.url), {
      workerData: request,
    });
    let outcome: { ok: true; value: unknown } | { ok: false; error: Error } | null = null;
    let killTimer: NodeJS.Timeout | undefined;
    const onAbort = () => {
      worker.postMessage({ type: 'cancel' } satisfies ParentToWorker);
      killTimer = setTimeout(() => {
        outcome ??= { ok: false, error: new CancelledError('Cancelled (the task was stopped).') };
        void worker.terminate();
      }, CANCEL_GRACE_MS);
    };
    if (context.signal.aborted) onAbort();
    else context.signal.addEventListener('abort', onAbort, { once: true });

    worker.on('message', (message: WorkerToParent) => {
      if (message.type === 'progress') context.onProgress(message.progress);
      else if (message.type === 'done') outcome = { ok: true, value: message.result };
      else outcome = { ok: false, error: fromApiError(message.error) };
    });
    worker.on('error', (error) => {
      outcome ??= { ok: false, error };
    });
    worker.on('exit', (code) => {
      clearTimeout(killTimer);
      context.signal.removeEventListener('abort', onAbort);
      if (outcome?.ok) resolve(outcome.value as TaskResults[M]);
      else reject(outcome?.error ?? new Error(`The task's worker thread stopped unexpectedly (exit code ${code}).`));
    });
  });
}
