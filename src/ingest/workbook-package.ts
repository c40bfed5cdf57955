/**
 * The ZIP package of an XLSX workbook, read through its central directory with yauzl (random
 * access, so the workbook and relationship parts are read first whatever order the writer put
 * them in; yauzl also checks that no entry inflates past the size the directory declares).
 *
 * Every part is checked before it is inflated: its declared inflated size against a limit for its
 * kind, and its compression ratio. A crafted package cannot make the importer hold gigabytes:
 * sheets are streamed, other parts are small by nature, and the shared strings are bounded by
 * their own table (see xlsx-shared-strings.ts).
 */
import { StringDecoder } from 'node:string_decoder';
import yauzl, { type Entry, type ZipFile } from 'yauzl';
import { InputError } from '../errors.js';

/** Largest inflated size of one part, by what the part is. */
export const PART_LIMITS = {
  /** Workbook part, relationship parts, content types. */
  structure: 16 * 1024 * 1024,
  styles: 32 * 1024 * 1024,
  /** The shared-strings XML (its table has its own, tighter, limits). */
  sharedStrings: 512 * 1024 * 1024,
  /** A worksheet is streamed; this bounds the time spent on one, not memory. */
  worksheet: 4 * 1024 * 1024 * 1024,
} as const;

/**
 * Inflated/compressed ratio above which a part is refused. Spreadsheet XML compresses about 8–12
 * times (measured on xlsxwriter and exceljs sheets of 200,000 rows); deflate cannot exceed about
 * 1,032 (from memory); 100 is the limit Apache POI applies by default (from memory).
 */
export const MAX_COMPRESSION_RATIO = 100;
/** Parts smaller than this when inflated are not held to the ratio (tiny parts compress oddly). */
const RATIO_GRACE_BYTES = 4 * 1024 * 1024;
/** More entries than any workbook needs; bounds the directory held in memory. */
const MAX_ENTRIES = 100_000;

function formatBytes(bytes: number): string {
  if (bytes >= 1e9) return `${(bytes / 1e9).toFixed(1)} GB`;
  if (bytes >= 1e6) return `${(bytes / 1e6).toFixed(1)} MB`;
  return `${Math.round(bytes / 1e3)} kB`;
}

/** Zip item name (no leading slash, percent-decoded) → lookup key; part names compare without case (OPC). */
export function partKey(partName: string): string {
  let name = partName.replace(/^\/+/, '');
  try {
    name = decodeURIComponent(name);
  } catch {
    // not percent-encoded after all: use it as it is
  }
  return name.toLowerCase();
}

function openZip(path: string): Promise<ZipFile> {
  return new Promise((resolve, reject) => {
    yauzl.open(path, { lazyEntries: true, autoClose: false, validateEntrySizes: true, strictFileNames: false }, (error, zip) =>
      error ? reject(error) : resolve(zip),
    );
  });
}

function readDirectory(zip: ZipFile): Promise<Entry[]> {
  return new Promise((resolve, reject) => {
    const entries: Entry[] = [];
    zip.on('entry', (entry: Entry) => {
      entries.push(entry);
      if (entries.length > MAX_ENTRIES) {
        reject(new InputError(`The workbook package lists more than ${MAX_ENTRIES.toLocaleString('en-GB')} parts; it is not a workbook this importer reads.`));
        return;
      }
      zip.readEntry();
    });
    zip.on('end', () => resolve(entries));
    zip.on('error', reject);
    zip.readEntry();
  });
}

/** Chooses the text decoding of an XML part from its byte-order mark (XML 1.0 §4.3.3: UTF-8 or UTF-16). */
function xmlDecoder(first: Buffer): { skip: number; decode: (bytes: Buffer) => string; end: () => string } {
  if (first[0] === 0xff && first[1] === 0xfe) {
    const decoder = new StringDecoder('utf16le');
    return { skip: 2, decode: (bytes) => decoder.write(bytes), end: () => decoder.end() };
  }
  if (first[0] === 0xfe && first[1] === 0xff) {
    const decoder = new TextDecoder('utf-16be');
    return { skip: 2, decode: (bytes) => decoder.decode(bytes, { stream: true }), end: () => decoder.decode() };
  }
  const decoder = new StringDecoder('utf8');
  const bom = first[0] === 0xef && first[1] === 0xbb && first[2] === 0xbf;
  return { skip: bom ? 3 : 0, decode: (bytes) => decoder.write(bytes), end: () => decoder.end() };
}

export class WorkbookPackage {
  private constructor(
    private readonly zip: ZipFile,
    private readonly entries: Map<string, Entry>,
    private readonly path: string,
  ) {}

  static async open(path: string): Promise<WorkbookPackage> {
    let zip: ZipFile | undefined;
    try {
      zip = await openZip(path);
      const entries = new Map<string, Entry>();
      for (const entry of await readDirectory(zip)) {
        const key = partKey(entry.fileName);
        if (!entries.has(key)) entries.set(key, entry);
      }
      return new WorkbookPackage(zip, entries, path);
    } catch (error) {
      zip?.close();
      if (error instanceof InputError) throw error;
      throw new InputError(`${path} could not be read as an XLSX workbook (damaged or truncated?): ${(error as Error).message}`);
    }
  }

  has(partName: string): boolean {
    return this.entries.has(partKey(partName));
  }

  /** Compressed bytes of the file before and within a part: for progress while a sheet streams. */
  span(partName: string): { start: number; compressed: number; inflated: number } {
    const entry = this.require(partName);
    return { start: entry.relativeOffsetOfLocalHeader, compressed: entry.compressedSize, inflated: entry.uncompressedSize };
  }

  private require(partName: string): Entry {
    const entry = this.entries.get(partKey(partName));
    if (!entry) throw new InputError(`${this.path} is not a complete workbook: the part "${partName}" is missing.`);
    return entry;
  }

  /** Refuses a part that would inflate past `maxBytes`, or that is compressed suspiciously well. */
  private check(partName: string, entry: Entry, maxBytes: number): void {
    const inflated = entry.uncompressedSize;
    const cause = 'The file may be damaged, or built to exhaust memory; if it is a real workbook, save the sheet as CSV and import that.';
    if (inflated > maxBytes) {
      throw new InputError(
        `The workbook part "${partName}" inflates to ${formatBytes(inflated)}, more than the ${formatBytes(maxBytes)} this importer reads from such a part. ${cause}`,
        { part: partName, inflatedBytes: inflated, limitBytes: maxBytes },
      );
    }
    const ratio = inflated / Math.max(1, entry.compressedSize);
    if (inflated > RATIO_GRACE_BYTES && ratio > MAX_COMPRESSION_RATIO) {
      throw new InputError(
        `The workbook part "${partName}" inflates ${Math.round(ratio)} times (${formatBytes(entry.compressedSize)} to ${formatBytes(inflated)}); ` +
          `spreadsheet data inflates about 10 times, and this importer refuses more than ${MAX_COMPRESSION_RATIO}. ${cause}`,
        { part: partName, ratio, limit: MAX_COMPRESSION_RATIO },
      );
    }
    if (entry.isEncrypted()) throw new InputError(`The workbook part "${partName}" is encrypted; save the workbook without a password and import again.`);
  }

  private openStream(entry: Entry): Promise<NodeJS.ReadableStream> {
    return new Promise((resolve, reject) => {
      this.zip.openReadStream(entry, (error, stream) => (error ? reject(error) : resolve(stream)));
    });
  }

  /**
   * The part's XML text in pieces as it inflates. `onInflated` hears the inflated byte count.
   * Damage found while inflating (a bad deflate stream, more bytes than declared) is an InputError.
   */
  async *textChunks(partName: string, maxBytes: number, onInflated?: (bytes: number) => void): AsyncGenerator<string> {
    const entry = this.require(partName);
    this.check(partName, entry, maxBytes);
    const stream = await this.openStream(entry);
    let decoder: ReturnType<typeof xmlDecoder> | undefined;
    let inflated = 0;
    try {
      for await (const chunk of stream as AsyncIterable<Buffer>) {
        inflated += chunk.length;
        onInflated?.(inflated);
        let bytes = chunk;
        if (decoder === undefined) {
          decoder = xmlDecoder(chunk);
          bytes = chunk.subarray(decoder.skip);
        }
        const text = decoder.decode(bytes);
        if (text.length > 0) yield text;
      }
      const rest = decoder?.end() ?? '';
      if (rest.length > 0) yield rest;
    } catch (error) {
      if (error instanceof InputError || (error as Error).name === 'CancelledError') throw error;
      throw new InputError(`${this.path}: the workbook part "${partName}" is damaged: ${(error as Error).message}`);
    } finally {
      (stream as NodeJS.ReadableStream & { destroy: () => void }).destroy();
    }
  }

  close(): void {
    this.zip.close();
  }
}
