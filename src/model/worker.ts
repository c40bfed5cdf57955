/**
 * Worker-thread side of the engine (see parallel.ts). The data arrives once, in shared memory;
 * each message asks for one restart of EM or for the E-step of a range of row chunks.
 */
import { parentPort, workerData } from 'node:worker_threads';
import { expectationChunks, expectationTerms } from './estep.js';
import { fitRestart, prepareFitContext } from './em.js';
import type { WorkerData, WorkerReply, WorkerRequest } from './worker-protocol.js';

const { values, rows, cols, anyMissing } = workerData as WorkerData;
const context = prepareFitContext({ values, rows, cols }, anyMissing);
const port = parentPort;
if (!port) throw new Error('worker.ts must run in a worker thread.');

port.on('message', (request: WorkerRequest) => {
  const reply = (message: WorkerReply, transfer: ArrayBuffer[] = []) => port.postMessage(message, transfer);
  try {
    if (request.type === 'restarts') {
      const outcomes = request.runs.map(({ options, restart }) =>
        fitRestart(context, options, restart, undefined, (progress) => reply({ type: 'progress', id: request.id, progress })),
      );
      reply({ type: 'done', id: request.id, result: outcomes });
    } else {
      const partials = expectationChunks(values, rows, expectationTerms(request.model), request.statistics, request.firstChunk, request.lastChunk, null);
      const buffers = [partials.weightSums, partials.firstMoments, partials.secondMoments, partials.summaries].map((array) => array.buffer as ArrayBuffer);
      reply({ type: 'done', id: request.id, result: partials }, buffers);
    }
  } catch (error) {
    const { name, message } = error instanceof Error ? error : { name: 'Error', message: String(error) };
    reply({ type: 'failed', id: request.id, name, message });
  }
});
