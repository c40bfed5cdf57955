/**
 * Float64 vectors as BLOBs (little-endian, 8 bytes per number): a customer's features in
 * original units and their posteriors are stored this way, one BLOB per row.
 */
import { endianness } from 'node:os';

const littleEndian = endianness() === 'LE';

export function encodeFloat64(values: ArrayLike<number>): Buffer {
  const buffer = Buffer.allocUnsafe(values.length * 8);
  for (let i = 0; i < values.length; i++) buffer.writeDoubleLE(values[i], i * 8);
  return buffer;
}

export function decodeFloat64(blob: Buffer | Uint8Array | null): Float64Array {
  if (!blob) return new Float64Array(0);
  const count = Math.floor(blob.byteLength / 8);
  if (littleEndian && blob.byteOffset % 8 === 0) return new Float64Array(blob.buffer, blob.byteOffset, count).slice();
  const view = new DataView(blob.buffer, blob.byteOffset, blob.byteLength);
  const values = new Float64Array(count);
  for (let i = 0; i < count; i++) values[i] = view.getFloat64(i * 8, true);
  return values;
}
