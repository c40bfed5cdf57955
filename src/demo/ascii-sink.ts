import { writeSync } from 'node:fs';

const DIGIT_0 = 48;
const FLUSH_BYTES = 1 << 16;

/**
 * Writes ASCII text straight into a reused byte buffer and hands it to a file descriptor in
 * 64 KiB pieces. The generator's rows are made of a few known pieces (ids, dates, numbers), so
 * writing bytes instead of building strings keeps the garbage collector out of the hot loop.
 */
export class AsciiSink {
  private readonly buffer = Buffer.allocUnsafe(FLUSH_BYTES + 4096);
  private position = 0;

  constructor(private readonly descriptor: number) {}

  /** Copies `length` bytes of `source` from `start` (short pieces: a loop beats set()). */
  bytes(source: Uint8Array, start = 0, length = source.length - start): void {
    const { buffer } = this;
    let at = this.position;
    for (let i = 0; i < length; i++) buffer[at++] = source[start + i];
    this.position = at;
  }

  byte(code: number): void {
    this.buffer[this.position++] = code;
  }

  /** A whole number ≥ 0, left-padded with zeros to `width` digits. */
  digits(value: number, width = 1): void {
    let count = 1;
    for (let rest = Math.floor(value / 10); rest > 0; rest = Math.floor(rest / 10)) count++;
    for (let pad = count; pad < width; pad++) this.buffer[this.position++] = DIGIT_0;
    let at = this.position + count - 1;
    let rest = value;
    do {
      this.buffer[at--] = DIGIT_0 + (rest % 10);
      rest = Math.floor(rest / 10);
    } while (rest > 0);
    this.position += count;
  }

  /** Cents as EUR with two decimals ("-3.05"): the bytes of formatCents. */
  cents(value: number): void {
    if (value < 0) this.byte(45); // '-'
    const magnitude = Math.abs(value);
    const euros = Math.floor(magnitude / 100);
    this.digits(euros);
    this.byte(46); // '.'
    this.digits(magnitude - euros * 100, 2);
  }

  /** Any text (header lines and the like); non-ASCII is not expected here. */
  text(value: string): void {
    if (this.position + value.length > this.buffer.length) this.flush();
    if (value.length > this.buffer.length) {
      writeSync(this.descriptor, value, null, 'latin1');
      return;
    }
    this.position += this.buffer.write(value, this.position, 'latin1');
  }

  /** Call after each row: writes the buffer out once it holds 64 KiB (rows are far shorter than the 4 KiB slack). */
  endRow(): void {
    if (this.position >= FLUSH_BYTES) this.flush();
  }

  flush(): void {
    let offset = 0;
    while (offset < this.position) offset += writeSync(this.descriptor, this.buffer, offset, this.position - offset);
    this.position = 0;
  }
}

/** The ASCII bytes of each string, end to end, for strings of one length (ids, dates). */
export function fixedWidthBytes(values: readonly string[], width: number): Uint8Array {
  const bytes = new Uint8Array(values.length * width);
  values.forEach((value, index) => {
    if (value.length !== width) throw new Error(`"${value}" is not ${width} characters long`);
    bytes.set(Buffer.from(value, 'latin1'), index * width);
  });
  return bytes;
}
