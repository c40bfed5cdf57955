import type { Worker, WorkerOptions } from 'node:worker_threads';
import { startWorker } from '../workers/start-worker.js';

/**
 * Starts a worker thread on the engine module next to the caller (`moduleBaseName` without
 * extension), bundled when running from source: the engine's workers load no native addon.
 */
export function startModuleWorker(callerUrl: string, moduleBaseName: string, options: WorkerOptions): Worker {
  const fromSource = callerUrl.endsWith('.ts');
  const moduleUrl = new URL(`./${moduleBaseName}${fromSource ? '.ts' : '.js'}`, callerUrl);
  return startWorker(moduleUrl, options, { bundle: true });
}
