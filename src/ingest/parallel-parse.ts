import { CancelledError, InputError } from '../errors.js';
import { startWorker } from '../workers/start-worker.js';
import type { ImportKind } from '../store/imports-repo.js';
import type { FileProbe } from './file-probe.js';
import type { ReadOptions } from './row-converters.js';
import { BatchUnpacker, type PackedBatch } from './packed-batch.js';
import type { ValidatedBatch } from './record-validator.js';

/** Everything the parse worker needs; plain data (it crosses the thread boundary). */
export interface ParseJob {
  probe: FileProbe;
  delimiter: string;
  kind: ImportKind;
  header: string[];
  fieldIndex: Array<[string, number]>;
  featureColumns: Array<[number, string]>;
  settings: ReadOptions;
  stride: number;
  aheadLimit: number;
}

export type WorkerReply = { type: 'batch'; batch: PackedBatch } | { type: 'done' } | { type: 'error'; message: string; input: boolean };

/**
 * Validated batches of a CSV file parsed in a worker thread, so that reading and validating
 * overlap with the database writes of the calling thread. The worker is stopped when the
 * consumer stops early, fails, or the signal fires.
 */
export async function* parseInWorker(job: ParseJob, signal?: AbortSignal): AsyncGenerator<ValidatedBatch> {
  // From source (tsx, vitest) the worker is the .ts module; in a compiled build the .js next to this one.
  const workerModule = new URL(import.meta.url.endsWith('.ts') ? './parse-worker.ts' : './parse-worker.js', import.meta.url);
  // A bounded heap: the worker holds one chunk and a few batches, so a runaway would be a bug. The
  // young generation is roomy because a small one made the worker spend 40% of its time in GC (measured).
  const worker = startWorker(
    workerModule,
    { workerData: job, resourceLimits: { maxOldGenerationSizeMb: 128, maxYoungGenerationSizeMb: 64 } },
    { bundle: true },
  );
  const unpacker = new BatchUnpacker();
  const queue: WorkerReply[] = [];
  let wake: (() => void) | undefined;
  const push = (reply: WorkerReply) => {
    queue.push(reply);
    wake?.();
    wake = undefined;
  };
  worker.on('message', push);
  worker.on('error', (error) => push({ type: 'error', message: error.message, input: false }));
  worker.on('exit', (code) => {
    if (code !== 0) push({ type: 'error', message: `the parse worker stopped (exit code ${code})`, input: false });
  });
  const onAbort = () => push({ type: 'error', message: 'cancelled', input: false });
  signal?.addEventListener('abort', onAbort);
  try {
    for (;;) {
      if (signal?.aborted) throw new CancelledError();
      while (queue.length === 0) await new Promise<void>((resolve) => (wake = resolve));
      const reply = queue.shift()!;
      if (signal?.aborted) throw new CancelledError();
      if (reply.type === 'done') return;
      if (reply.type === 'error') {
        throw reply.input ? new InputError(reply.message) : new Error(reply.message);
      }
      worker.postMessage({ type: 'ack' });
      yield unpacker.unpack(reply.batch);
    }
  } finally {
    signal?.removeEventListener('abort', onAbort);
    worker.removeAllListeners('exit');
    await worker.terminate();
  }
}
