import { parentPort, workerData } from 'node:worker_threads';
import { InputError } from '../errors.js';
import { csvRecordBatches } from './csv-reader.js';
import type { ParseJob, WorkerReply } from './parallel-parse.js';
import { BatchPacker } from './packed-batch.js';
import { makeRowConverter } from './row-converters.js';
import { fileTotalsContext, validateRecords } from './record-validator.js';

/**
 * Worker thread of a large CSV import: reads, tokenizes and validates the file while the main
 * thread writes to the database. At most `job.aheadLimit` batches are in flight, so memory stays
 * flat however fast the reading side is.
 */
const job = workerData as ParseJob;
const port = parentPort!;
let credit = job.aheadLimit;
let wake: (() => void) | undefined;
port.on('message', (message: { type: 'ack' }) => {
  if (message.type === 'ack') {
    credit += 1;
    wake?.();
    wake = undefined;
  }
});

async function run(): Promise<void> {
  const resolved = {
    fieldIndex: new Map(job.fieldIndex),
    featureColumns: job.featureColumns,
    mapping: {},
    unusedColumns: [],
    missing: [],
    usedSaved: false,
  };
  const context = {
    convert: makeRowConverter(job.kind, resolved, job.header, job.settings),
    width: job.header.length,
    stride: job.stride,
    padShortRows: false,
    delimiter: job.delimiter,
    ...fileTotalsContext(job.kind),
  };
  const packer = new BatchPacker(job.stride);
  let bytes = 0;
  let headerSkipped = false;
  for await (const records of csvRecordBatches(job.probe, job.delimiter, undefined, (read) => {
    bytes = read;
  })) {
    const data = headerSkipped ? records : records.slice(1);
    headerSkipped = true;
    const { packed, transfer } = packer.pack(validateRecords(data, context, bytes));
    while (credit <= 0) await new Promise<void>((resolve) => (wake = resolve));
    credit -= 1;
    port.postMessage({ type: 'batch', batch: packed } satisfies WorkerReply, transfer);
  }
  port.postMessage({ type: 'done' } satisfies WorkerReply);
}

run().catch((error: unknown) => {
  port.postMessage({
    type: 'error',
    message: error instanceof Error ? error.message : String(error),
    input: error instanceof InputError,
  } satisfies WorkerReply);
});
