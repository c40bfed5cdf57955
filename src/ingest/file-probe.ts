import { createHash } from 'node:crypto';
import { isUtf8 } from 'node:buffer';
import { open, stat } from 'node:fs/promises';
import { InputError, throwIfAborted } from '../errors.js';

export type FileFormat = 'csv' | 'xlsx';
export type TextEncoding = 'utf-8' | 'windows-1252' | 'utf-16le' | 'utf-16be';

/** What one read-through of the file tells us before any row is parsed. */
export interface FileProbe {
  path: string;
  bytes: number;
  /** SHA-256 of the raw bytes: the same file imported twice is recognised by it. */
  contentHash: string;
  format: FileFormat;
  /** CSV only: detected text encoding. */
  encoding: TextEncoding;
  /** CSV only: byte length of the byte-order mark to skip. */
  bomBytes: number;
}

export const READ_CHUNK_BYTES = 1 << 18;
/** The probe only hashes and scans, so it reads in larger pieces (fewer awaits; measured faster). */
const PROBE_CHUNK_BYTES = 1 << 22;

/**
 * Reads the file once: content hash, format (XLSX by its zip signature, else text), and for text
 * the encoding: a BOM decides; otherwise valid UTF-8 throughout means UTF-8 and anything else is
 * read as Windows-1252 (the usual encoding of spreadsheet exports on Western-European Windows,
 * common practice). NUL bytes in a BOM-less file mean it is binary, not CSV.
 */
export async function probeFile(
  path: string,
  signal?: AbortSignal,
  onBytes?: (bytes: number) => void,
  /** Read only this much (previews): format and encoding from the start of the file; the hash is then of that part. */
  limitBytes = Number.POSITIVE_INFINITY,
): Promise<FileProbe> {
  let size: number;
  try {
    const info = await stat(path);
    if (info.isDirectory()) throw new InputError(`${path} is a folder, not a file.`);
    size = info.size;
  } catch (error) {
    if (error instanceof InputError) throw error;
    throw new InputError(`Cannot read ${path}: ${(error as Error).message}`);
  }
  if (size === 0) throw new InputError(`${path} is empty.`);
  const handle = await open(path, 'r');
  try {
    const hash = createHash('sha256');
    const buffer = Buffer.allocUnsafe(PROBE_CHUNK_BYTES);
    let offset = 0;
    let format: FileFormat = 'csv';
    let encoding: TextEncoding = 'utf-8';
    let bomBytes = 0;
    let validUtf8 = true;
    let carry: Buffer = Buffer.alloc(0);
    for (;;) {
      throwIfAborted(signal);
      const { bytesRead } = await handle.read(buffer, 0, buffer.length, offset);
      if (bytesRead === 0 || offset >= limitBytes) break;
      const chunk = buffer.subarray(0, bytesRead);
      hash.update(chunk);
      if (offset === 0) {
        if (chunk.length >= 4 && chunk[0] === 0x50 && chunk[1] === 0x4b && chunk[2] === 0x03 && chunk[3] === 0x04) format = 'xlsx';
        else if (chunk[0] === 0xef && chunk[1] === 0xbb && chunk[2] === 0xbf) bomBytes = 3;
        else if (chunk[0] === 0xff && chunk[1] === 0xfe) [encoding, bomBytes] = ['utf-16le', 2];
        else if (chunk[0] === 0xfe && chunk[1] === 0xff) [encoding, bomBytes] = ['utf-16be', 2];
      }
      if (format === 'csv' && encoding === 'utf-8') {
        if (chunk.indexOf(0) >= 0) {
          throw new InputError(`${path} looks like a binary file (it contains NUL bytes), not a CSV or XLSX file.`);
        }
        if (validUtf8) {
          const joined = carry.length > 0 ? Buffer.concat([carry, chunk]) : chunk;
          const complete = completeUtf8Length(joined);
          validUtf8 = isUtf8(joined.subarray(0, complete));
          carry = Buffer.from(joined.subarray(complete));
        }
      }
      offset += bytesRead;
      onBytes?.(offset);
    }
    const cutShort = offset < size;
    if (format === 'csv' && encoding === 'utf-8' && ((carry.length > 0 && !cutShort) || !validUtf8)) {
      encoding = bomBytes === 3 ? 'utf-8' : 'windows-1252';
    }
    return { path, bytes: cutShort ? size : offset, contentHash: hash.digest('hex'), format, encoding, bomBytes };
  } finally {
    await handle.close();
  }
}

/** Length of the prefix that does not end inside a multi-byte UTF-8 sequence. */
export function completeUtf8Length(buffer: Buffer): number {
  const end = buffer.length;
  for (let back = 1; back <= Math.min(3, end); back += 1) {
    const byte = buffer[end - back];
    if ((byte & 0xc0) === 0x80) continue; // continuation byte: keep looking for the lead
    const needed = byte >= 0xf0 ? 4 : byte >= 0xe0 ? 3 : byte >= 0xc0 ? 2 : 1;
    return needed > back ? end - back : end;
  }
  return end;
}
