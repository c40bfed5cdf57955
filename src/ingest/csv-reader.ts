import iconv from 'iconv-lite';
import { open } from 'node:fs/promises';
import { throwIfAborted } from '../errors.js';
import { CsvTokenizer, type CsvRecord } from './csv-tokenizer.js';
import { completeUtf8Length, READ_CHUNK_BYTES, type FileProbe, type TextEncoding } from './file-probe.js';

export const CANDIDATE_DELIMITERS = [',', ';', '\t', '|'] as const;

interface TextDecoderLike {
  write(bytes: Buffer): string;
  end(): string;
}

function makeDecoder(encoding: TextEncoding): TextDecoderLike {
  if (encoding === 'windows-1252') {
    const decoder = iconv.getDecoder('win1252');
    return { write: (bytes) => decoder.write(bytes), end: () => decoder.end() ?? '' };
  }
  if (encoding === 'utf-8') return utf8Decoder();
  const decoder = new TextDecoder(encoding, { ignoreBOM: true });
  return { write: (bytes) => decoder.decode(bytes, { stream: true }), end: () => decoder.decode() };
}

/**
 * Buffer#toString is several times faster than TextDecoder here; a sequence cut by the chunk
 * boundary is carried over to the next chunk.
 */
function utf8Decoder(): TextDecoderLike {
  let carry: Buffer | undefined;
  return {
    write(bytes) {
      const joined = carry ? Buffer.concat([carry, bytes]) : bytes;
      const complete = completeUtf8Length(joined);
      carry = complete < joined.length ? Buffer.from(joined.subarray(complete)) : undefined;
      return joined.toString('utf8', 0, complete);
    },
    end() {
      const rest = carry ? carry.toString('utf8') : '';
      carry = undefined;
      return rest;
    },
  };
}

/** Decodes the first `maxBytes` of the file (for sniffing and previews). */
export async function readTextStart(probe: FileProbe, maxBytes = 64 * 1024): Promise<string> {
  const handle = await open(probe.path, 'r');
  try {
    const buffer = Buffer.alloc(Math.min(maxBytes, probe.bytes));
    const { bytesRead } = await handle.read(buffer, 0, buffer.length, probe.bomBytes);
    return makeDecoder(probe.encoding).write(buffer.subarray(0, bytesRead));
  } finally {
    await handle.close();
  }
}

/**
 * Picks the delimiter among `, ; \t |` that splits the first records into the same number of
 * fields most often, preferring more fields on a tie. A file whose records all stay one field wide
 * under every candidate is read with a comma.
 */
export function sniffDelimiter(sample: string): string {
  // Drop a possibly cut-off last line so it cannot skew the counts.
  const lastBreak = Math.max(sample.lastIndexOf('\n'), sample.lastIndexOf('\r'));
  const text = lastBreak > 0 ? sample.slice(0, lastBreak + 1) : sample;
  let best = { delimiter: ',', agreeing: -1, width: 1 };
  for (const delimiter of CANDIDATE_DELIMITERS) {
    const widths: number[] = [];
    try {
      const tokenizer = new CsvTokenizer(delimiter);
      const collect = (record: CsvRecord) => {
        if (widths.length < 50) widths.push(record.fields.length);
      };
      tokenizer.push(text, collect);
      tokenizer.finish(collect);
    } catch {
      continue; // unbalanced quotes under this delimiter's reading of a cut sample
    }
    if (widths.length === 0) continue;
    const headerWidth = widths[0];
    if (headerWidth < 2) continue;
    const agreeing = widths.filter((width) => width === headerWidth).length;
    if (agreeing > best.agreeing || (agreeing === best.agreeing && headerWidth > best.width)) {
      best = { delimiter, agreeing, width: headerWidth };
    }
  }
  return best.delimiter;
}

/**
 * Streams the file's records in batches (one batch per chunk read), header included; memory stays
 * at one chunk plus one batch whatever the file size.
 */
export async function* csvRecordBatches(
  probe: FileProbe,
  delimiter: string,
  signal?: AbortSignal,
  onBytes?: (bytes: number) => void,
): AsyncGenerator<CsvRecord[]> {
  const handle = await open(probe.path, 'r');
  try {
    const decoder = makeDecoder(probe.encoding);
    const tokenizer = new CsvTokenizer(delimiter);
    const buffer = Buffer.allocUnsafe(READ_CHUNK_BYTES);
    let offset = probe.bomBytes;
    let batch: CsvRecord[] = [];
    const collect = (record: CsvRecord) => {
      batch.push(record);
    };
    for (;;) {
      throwIfAborted(signal);
      const { bytesRead } = await handle.read(buffer, 0, buffer.length, offset);
      if (bytesRead === 0) break;
      offset += bytesRead;
      tokenizer.push(decoder.write(buffer.subarray(0, bytesRead)), collect);
      onBytes?.(offset);
      if (batch.length > 0) {
        yield batch;
        batch = [];
      }
    }
    const tail = decoder.end();
    if (tail.length > 0) tokenizer.push(tail, collect);
    tokenizer.finish(collect);
    if (batch.length > 0) yield batch;
  } finally {
    await handle.close();
  }
}
