import { createHash } from 'node:crypto';
import { isUtf8 } from 'node:buffer';
import { open, stat, type FileHandle } from 'node:fs/promises';
import { InputError, throwIfAborted } from '../errors.js';

export type FileFormat = 'csv' | 'xlsx';
export type TextEncoding = 'utf-8' | 'windows-1252' | 'utf-16le' | 'utf-16be';
/** How a CSV file's text is read: UTF-8 (a UTF-16 byte-order mark is honoured), or Windows-1252 when chosen. */
export type EncodingChoice = 'utf-8' | 'windows-1252';
export const ENCODING_CHOICES: readonly EncodingChoice[] = ['utf-8', 'windows-1252'];

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
 * the encoding. A UTF-16 BOM decides; otherwise the text is UTF-8 unless Windows-1252 is chosen,
 * and bytes that are not UTF-8 are refused, naming the line and the choice: read silently as
 * Windows-1252 they would turn into other letters wherever the guess was wrong. (Windows-1252 is
 * the usual encoding of spreadsheet exports on Western-European Windows, common practice.) NUL
 * bytes in a BOM-less file mean it is binary, not CSV.
 */
export async function probeFile(
  path: string,
  signal?: AbortSignal,
  onBytes?: (bytes: number) => void,
  /** Read only this much (previews): format and encoding from the start of the file; the hash is then of that part. */
  limitBytes = Number.POSITIVE_INFINITY,
  encodingChoice: EncodingChoice = 'utf-8',
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
        if (format === 'csv' && encodingChoice === 'windows-1252') {
          if (bomBytes > 0) {
            throw new InputError(`${path} starts with a ${encoding === 'utf-8' ? 'UTF-8' : 'UTF-16'} byte-order mark, so it is not Windows-1252: import it with the encoding set to UTF-8.`);
          }
          encoding = 'windows-1252';
        }
      }
      if (format === 'csv' && encoding !== 'utf-16le' && encoding !== 'utf-16be') {
        if (chunk.indexOf(0) >= 0) {
          throw new InputError(`${path} looks like a binary file (it contains NUL bytes), not a CSV or XLSX file.`);
        }
        if (encoding === 'utf-8') {
          const joined = carry.length > 0 ? Buffer.concat([carry, chunk]) : chunk;
          const complete = completeUtf8Length(joined);
          if (!isUtf8(joined.subarray(0, complete))) {
            const at = offset - carry.length + firstInvalidUtf8(joined.subarray(0, complete));
            throw await notUtf8Error(path, handle, at);
          }
          carry = Buffer.from(joined.subarray(complete));
        }
      }
      offset += bytesRead;
      onBytes?.(offset);
    }
    const cutShort = offset < size;
    if (format === 'csv' && encoding === 'utf-8' && carry.length > 0 && !cutShort) throw await notUtf8Error(path, handle, offset - carry.length);
    return { path, bytes: cutShort ? size : offset, contentHash: hash.digest('hex'), format, encoding, bomBytes };
  } finally {
    await handle.close();
  }
}

/** Index of the first byte that does not belong to a valid UTF-8 sequence (RFC 3629 §4); -1 when all are valid. */
export function firstInvalidUtf8(bytes: Buffer): number {
  let index = 0;
  while (index < bytes.length) {
    const lead = bytes[index];
    if (lead < 0x80) {
      index += 1;
      continue;
    }
    const length = lead >= 0xc2 && lead <= 0xdf ? 2 : lead >= 0xe0 && lead <= 0xef ? 3 : lead >= 0xf0 && lead <= 0xf4 ? 4 : 0;
    if (length === 0 || index + length > bytes.length) return index;
    const second = bytes[index + 1];
    const low = lead === 0xe0 ? 0xa0 : lead === 0xf0 ? 0x90 : 0x80;
    const high = lead === 0xed ? 0x9f : lead === 0xf4 ? 0x8f : 0xbf;
    if (second < low || second > high) return index;
    for (let next = 2; next < length; next += 1) if ((bytes[index + next] & 0xc0) !== 0x80) return index;
    index += length;
  }
  return -1;
}

/**
 * The refusal of a file that is not UTF-8: where (line, and the bytes in hex, never echoed raw)
 * and what to do. Counting the line re-reads the file up to that point; this runs only on refusal.
 */
async function notUtf8Error(path: string, handle: FileHandle, at: number): Promise<InputError> {
  const buffer = Buffer.allocUnsafe(PROBE_CHUNK_BYTES);
  let line = 1;
  for (let offset = 0; offset < at; ) {
    const { bytesRead } = await handle.read(buffer, 0, Math.min(buffer.length, at - offset), offset);
    if (bytesRead === 0) break;
    const part = buffer.subarray(0, bytesRead);
    for (let index = part.indexOf(10); index >= 0; index = part.indexOf(10, index + 1)) line += 1;
    offset += bytesRead;
  }
  const sample = Buffer.alloc(4);
  const { bytesRead } = await handle.read(sample, 0, 4, at);
  const hex = [...sample.subarray(0, bytesRead)].map((byte) => byte.toString(16).toUpperCase().padStart(2, '0')).join(' ');
  return new InputError(
    `${path} is not UTF-8 text: line ${line} has bytes that UTF-8 does not allow (${hex}). ` +
      'Files saved by spreadsheet programs on Western-European Windows are often Windows-1252: import it again with the encoding set to ' +
      'Windows-1252 (--encoding windows-1252), or save it as "CSV UTF-8".',
    { line, byteOffset: at, encodingChoices: [...ENCODING_CHOICES] },
  );
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
