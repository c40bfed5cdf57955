import { parentPort, workerData } from 'node:worker_threads';
import { toApiError } from './api-errors.js';
import type { LongTaskMethod } from './contract.js';
import type { LongTaskRequest } from './long-task-request.js';
import { runLongTask } from './long-tasks.js';
import type { WorkerToParent, ParentToWorker } from './worker-messages.js';

/**
 * Worker-thread side of a long task: runs the core function for the request in workerData, posts
 * progress (throttled), then the result or the error; a `cancel` message aborts its signal.
 */
const port = parentPort;
if (!port) throw new Error('task-worker.ts must run in a worker thread.');

const request = workerData as LongTaskRequest<LongTaskMethod>;
const controller = new AbortController();
port.on('message', (message: ParentToWorker) => {
  if (message.type === 'cancel') controller.abort();
});

/** At most this often a progress message, except when the phase changes or a phase ends. */
const PROGRESS_INTERVAL_MS = 100;
let lastSent = 0;
let lastPhase = '';

const post = (message: WorkerToParent) => port.postMessage(message);

try {
  const result = await runLongTask(request, {
    signal: controller.signal,
    onProgress: (progress) => {
      const now = Date.now();
      const phaseEnded = progress.total !== null && progress.done >= progress.total;
      if (progress.phase === lastPhase && !phaseEnded && now - lastSent < PROGRESS_INTERVAL_MS) return;
      lastSent = now;
      lastPhase = progress.phase;
      post({ type: 'progress', progress });
    },
  });
  post({ type: 'done', result });
} catch (error) {
  post({ type: 'failed', error: toApiError(error) });
}
port.close();
