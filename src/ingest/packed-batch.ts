import type { ValidatedBatch } from './record-validator.js';

type Value = string | number | null;

/**
 * A validated batch in the form that crosses between threads cheaply. Structured cloning a flat
 * array of millions of mixed values costs more than parsing them (measured), while one long string,
 * one typed array of numbers and one of tags clone as a few memory copies:
 *
 * - `tags[i]` says what value `i` of the batch is: NULL_TAG, TEXT_TAG (the next piece of `text`,
 *   pieces joined by U+0000), NUMBER_TAG (the next entry of `numbers`), DICTIONARY_TAG (the
 *   next entry of `numbers` is a code into the decoder's dictionary) or SAME_AS_ROW_ABOVE (the
 *   string of the same column one row up: the department rows of a receipt repeat its receipt
 *   and customer ids);
 * - `newEntries` are the dictionary strings first used in this batch, in code order.
 *
 * A batch with a U+0000 inside a string value travels as the plain array (`plain`) instead.
 */
export interface PackedBatch extends BatchSummary {
  /** Values per row. */
  stride: number;
  tags: Uint8Array;
  text: string;
  textCount: number;
  numbers: Float64Array;
  newEntries: string[];
  plain: Value[] | null;
}

/** What a batch says besides its values; it travels as it is. */
type BatchSummary = Omit<ValidatedBatch, 'values'>;

const NULL_TAG = 0;
const TEXT_TAG = 1;
const NUMBER_TAG = 2;
const DICTIONARY_TAG = 3;
const SAME_AS_ROW_ABOVE = 4;
const SEPARATOR = '\u0000';

/**
 * A column stops being dictionary-coded once this many of its strings were new to the dictionary
 * (receipt and customer ids); store ids, departments, times and channels stay coded, so the
 * receiving thread makes no new string for them.
 */
const MAX_NEW_ENTRIES_PER_COLUMN = 512;
const MAX_CODED_LENGTH = 32;

/** Packs the batches of one file in order; the dictionary it builds is mirrored by BatchUnpacker. */
export class BatchPacker {
  private readonly codes = new Map<string, number>();
  private readonly newPerColumn: Int32Array;
  /** Columns still dictionary-coded; the others skip the look-up altogether. */
  private readonly coded: boolean[];

  constructor(private readonly stride: number) {
    if (!Number.isSafeInteger(stride) || stride <= 0) throw new Error(`Bad row stride ${stride}`);
    this.newPerColumn = new Int32Array(stride);
    this.coded = new Array<boolean>(stride).fill(true);
  }

  pack(batch: ValidatedBatch): { packed: PackedBatch; transfer: ArrayBuffer[] } {
    const { values } = batch;
    const tags = new Uint8Array(values.length);
    const numbers = new Float64Array(values.length);
    const pieces: string[] = [];
    const newEntries: string[] = [];
    let numberCount = 0;
    let column = 0;
    for (let index = 0; index < values.length; index += 1) {
      const value = values[index];
      if (value === null) {
        tags[index] = NULL_TAG;
      } else if (typeof value === 'number') {
        tags[index] = NUMBER_TAG;
        numbers[numberCount++] = value;
      } else if (this.coded[column] && value.length <= MAX_CODED_LENGTH) {
        let code = this.codes.get(value);
        if (code === undefined) {
          code = this.codes.size;
          this.codes.set(value, code);
          newEntries.push(value);
          if (++this.newPerColumn[column] >= MAX_NEW_ENTRIES_PER_COLUMN) this.coded[column] = false;
        }
        tags[index] = DICTIONARY_TAG;
        numbers[numberCount++] = code;
      } else if (index >= this.stride && values[index - this.stride] === value) {
        tags[index] = SAME_AS_ROW_ABOVE;
      } else {
        if (value.includes(SEPARATOR)) return this.plainForm(batch, newEntries);
        tags[index] = TEXT_TAG;
        pieces.push(value);
      }
      column = column + 1 === this.stride ? 0 : column + 1;
    }
    const numbersUsed = numbers.slice(0, numberCount);
    const packed: PackedBatch = {
      ...summaryOf(batch),
      stride: this.stride,
      tags,
      text: pieces.join(SEPARATOR),
      textCount: pieces.length,
      numbers: numbersUsed,
      newEntries,
      plain: null,
    };
    return { packed, transfer: [tags.buffer, numbersUsed.buffer] };
  }

  /** Dictionary entries made before the bad value are still sent, so both sides stay in step. */
  private plainForm(batch: ValidatedBatch, newEntries: string[]): { packed: PackedBatch; transfer: ArrayBuffer[] } {
    const packed: PackedBatch = {
      ...summaryOf(batch),
      stride: this.stride,
      tags: new Uint8Array(0),
      text: '',
      textCount: 0,
      numbers: new Float64Array(0),
      newEntries,
      plain: batch.values,
    };
    return { packed, transfer: [] };
  }
}

function summaryOf(batch: BatchSummary): BatchSummary {
  const { accepted, rejected, rowsRead, bytes, amountCents, newStoreIds } = batch;
  return { accepted, rejected, rowsRead, bytes, amountCents, newStoreIds };
}

/** Turns packed batches back into validated batches, in the order they were packed. */
export class BatchUnpacker {
  private readonly dictionary: string[] = [];

  unpack(packed: PackedBatch): ValidatedBatch {
    for (const entry of packed.newEntries) this.dictionary.push(entry);
    const summary = summaryOf(packed);
    if (packed.plain) return { ...summary, values: packed.plain };
    const { tags, numbers, stride } = packed;
    const dictionary = this.dictionary;
    const pieces = packed.textCount === 0 ? [] : packed.text.split(SEPARATOR);
    if (pieces.length !== packed.textCount) throw new Error(`Packed batch holds ${pieces.length} strings, expected ${packed.textCount}`);
    const values: Value[] = new Array<Value>(tags.length);
    let piece = 0;
    let number = 0;
    for (let index = 0; index < tags.length; index += 1) {
      switch (tags[index]) {
        case NULL_TAG:
          values[index] = null;
          break;
        case TEXT_TAG:
          values[index] = pieces[piece++];
          break;
        case NUMBER_TAG:
          values[index] = numbers[number++];
          break;
        case DICTIONARY_TAG:
          values[index] = dictionary[numbers[number++]];
          break;
        case SAME_AS_ROW_ABOVE:
          values[index] = values[index - stride];
          break;
        default:
          throw new Error(`Unknown value tag ${tags[index]} in a packed batch`);
      }
    }
    return { ...summary, values };
  }
}
