/**
 * Keeps exceljs's streaming writer streaming.
 *
 * In exceljs 4.4.0 a sheet's XML goes into a zip entry whose deflate stream only advances when
 * the event loop turns, and nothing pushes back on the writer: a loop that adds rows without
 * yielding piles the whole sheet's XML up in memory (about 0.4–0.6 KB a row) until the
 * workbook is committed. So the sheet writer yields every few rows, and waits while more than
 * `highWaterBytes` are queued in front of the deflater. The queue length is read from the
 * sheet's pipe (internal fields, read defensively): if a later exceljs changes them, we still
 * yield and only lose the wait.
 */
import { setImmediate as nextTurn, setTimeout as sleep } from 'node:timers/promises';
import { throwIfAborted } from '../errors.js';

/** Yield to the event loop every this many rows (measured: 32 keeps the deflater busy). */
export const rowsPerYield = 32;

const highWaterBytes = 8 * 1024 * 1024;
const lowWaterBytes = 2 * 1024 * 1024;

interface PipeState {
  _writableState?: { length?: number };
}

interface SheetInternals {
  _stream?: { pipes?: PipeState[] };
}

/** Bytes of this sheet's XML waiting for the deflater (0 when the internals are not there). */
export function queuedSheetBytes(worksheet: unknown): number {
  const pipe = (worksheet as SheetInternals)._stream?.pipes?.[0];
  const length = pipe?._writableState?.length;
  return typeof length === 'number' ? length : 0;
}

/**
 * Lets the zip catch up: one event-loop turn, and a wait while the queue is above the high water.
 * The signal ends the wait: once the output has failed, the queue never drains.
 */
export async function letZipCatchUp(worksheet: unknown, signal?: AbortSignal): Promise<void> {
  await nextTurn();
  throwIfAborted(signal);
  if (queuedSheetBytes(worksheet) <= highWaterBytes) return;
  // Sleep rather than spin: the deflater runs on libuv's thread pool and needs no help from us.
  while (queuedSheetBytes(worksheet) > lowWaterBytes) {
    await sleep(2);
    throwIfAborted(signal);
  }
}
