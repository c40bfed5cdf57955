/**
 * The shared strings of a workbook, held compactly and within stated limits: the text of every
 * string as UTF-8 in large blocks, and three numbers per string to find it. A table at its limits
 * takes MAX_SHARED_STRING_BYTES plus 12 bytes a string (about 144 MB), so an import that reads
 * one stays inside its 400 MB budget; past a limit the workbook is refused with the way out (save
 * the sheet as CSV, which streams whatever its size).
 */
import { InputError } from '../errors.js';
import { PART_LIMITS, type WorkbookPackage } from './workbook-package.js';
import { decodeOoxmlEscapes, parseXml } from './xml-stream.js';

export const MAX_SHARED_STRINGS = 4_000_000;
export const MAX_SHARED_STRING_BYTES = 96 * 1024 * 1024;
/** One string: a cell holds at most 32,767 characters (Excel, from memory), under 128 KiB of UTF-8. */
const MAX_STRING_BYTES = 256 * 1024;

const BLOCK_BYTES = 4 * 1024 * 1024;
/** Recently looked-up strings by index (store ids and departments repeat on every row). */
const CACHE_SLOTS = 4096;

export class SharedStringTable {
  private readonly blocks: Buffer[] = [];
  private used = BLOCK_BYTES; // forces a first block
  private blockOf = new Uint32Array(1024);
  private startOf = new Uint32Array(1024);
  private lengthOf = new Uint32Array(1024);
  private totalBytes = 0;
  private readonly cacheKeys = new Int32Array(CACHE_SLOTS).fill(-1);
  private readonly cacheValues: string[] = new Array<string>(CACHE_SLOTS).fill('');
  count = 0;

  constructor(private readonly refuse: (message: string) => never) {}

  add(text: string): void {
    if (this.count >= MAX_SHARED_STRINGS) {
      this.refuse(`holds more than ${MAX_SHARED_STRINGS.toLocaleString('en-GB')} different strings`);
    }
    const bytes = Buffer.byteLength(text, 'utf8');
    if (bytes > MAX_STRING_BYTES) this.refuseLongString(bytes);
    this.totalBytes += bytes;
    if (this.totalBytes > MAX_SHARED_STRING_BYTES) {
      this.refuse(`holds more than ${MAX_SHARED_STRING_BYTES / 1024 / 1024} MiB of text in its strings`);
    }
    if (this.count === this.blockOf.length) this.grow();
    if (this.used + bytes > BLOCK_BYTES) {
      this.blocks.push(Buffer.allocUnsafe(BLOCK_BYTES));
      this.used = 0;
    }
    const block = this.blocks[this.blocks.length - 1];
    block.write(text, this.used, 'utf8');
    this.blockOf[this.count] = this.blocks.length - 1;
    this.startOf[this.count] = this.used;
    this.lengthOf[this.count] = bytes;
    this.used += bytes;
    this.count += 1;
  }

  /** Refuses a string longer than any cell holds (also called while one is still being read). */
  refuseLongString(size: number): never {
    this.refuse(`holds a string of more than ${size.toLocaleString('en-GB')} bytes, longer than any cell can hold`);
  }

  private grow(): void {
    const size = Math.min(this.blockOf.length * 2, MAX_SHARED_STRINGS);
    for (const key of ['blockOf', 'startOf', 'lengthOf'] as const) {
      const larger = new Uint32Array(size);
      larger.set(this[key]);
      this[key] = larger;
    }
  }

  /** The string at `index`, or undefined when there is none. */
  get(index: number): string | undefined {
    if (!(index >= 0 && index < this.count)) return undefined;
    const slot = index & (CACHE_SLOTS - 1);
    if (this.cacheKeys[slot] === index) return this.cacheValues[slot];
    const start = this.startOf[index];
    const text = this.blocks[this.blockOf[index]].toString('utf8', start, start + this.lengthOf[index]);
    this.cacheKeys[slot] = index;
    this.cacheValues[slot] = text;
    return text;
  }
}

/**
 * Reads the shared-strings part: each `<si>` is one string, its `<t>` pieces joined (rich text
 * runs), phonetic guides (`<rPh>`) left out as they are not part of the text.
 */
export async function readSharedStrings(pkg: WorkbookPackage, part: string | null, path: string): Promise<SharedStringTable> {
  const table = new SharedStringTable((problem) => {
    throw new InputError(
      `The workbook ${path} ${problem}: more than this importer holds in memory for one workbook. ` +
        'Save the sheet as CSV (UTF-8) and import the CSV; CSV files are read as a stream whatever their size.',
      { limitStrings: MAX_SHARED_STRINGS, limitBytes: MAX_SHARED_STRING_BYTES },
    );
  });
  if (part === null || !pkg.has(part)) return table;
  let pieces: string[] | null = null;
  let characters = 0;
  let inText = false;
  let phoneticDepth = 0;
  await parseXml(pkg.textChunks(part, PART_LIMITS.sharedStrings), `The shared strings part ${part}`, {
    open: (name) => {
      if (name === 'si') {
        pieces = [];
        characters = 0;
      }
      else if (name === 'rPh') phoneticDepth += 1;
      else if (name === 't' && pieces !== null && phoneticDepth === 0) inText = true;
    },
    text: (value) => {
      if (!inText) return;
      characters += value.length;
      if (characters > MAX_STRING_BYTES) table.refuseLongString(characters);
      pieces!.push(value);
    },
    close: (name) => {
      if (name === 't') inText = false;
      else if (name === 'rPh') phoneticDepth -= 1;
      else if (name === 'si' && pieces !== null) {
        table.add(decodeOoxmlEscapes(pieces.length === 1 ? pieces[0] : pieces.join('')));
        pieces = null;
      }
    },
  });
  return table;
}
