import fc from 'fast-check';
import { describe, expect, it } from 'vitest';
import { BatchPacker, BatchUnpacker } from '../../src/ingest/packed-batch.js';
import type { ValidatedBatch } from '../../src/ingest/record-validator.js';

type Value = string | number | null;

function batchOf(values: Value[], stride: number): ValidatedBatch {
  const rows = values.length / stride;
  return { values, accepted: rows, rejected: [{ line: 7, column: 'amount', value: 'x', reason: 'not a number' }], rowsRead: rows + 1, bytes: 1234, amountCents: 98_765, newStoreIds: ['S01', 'S02'] };
}

/** What postMessage does to the packed batch: a structured clone, typed arrays included. */
function acrossThreads<T>(value: T): T {
  return structuredClone(value);
}

describe('packed batches between the parse worker and the writer', () => {
  it('round-trips a receipts-like file batch by batch: repeated short strings as dictionary codes, ids repeated from the row above as a tag', () => {
    const stride = 8;
    const packer = new BatchPacker(stride);
    const unpacker = new BatchUnpacker();
    for (let batchNumber = 0; batchNumber < 5; batchNumber += 1) {
      const values: Value[] = [];
      for (let row = 0; row < 1000; row += 1) {
        const n = batchNumber * 1000 + row;
        // Three department rows per receipt: ids repeat from the row above.
        const receipt = Math.floor(n / 3);
        values.push(`R${receipt}`, `C${(receipt * 7919) % 3001}`, 20_000 + (n % 300), n % 3 === 0 ? null : '10:15:00', n % 50 === 0 ? -125 : 1999, `S${n % 16}`, ['fresh', 'dairy', null][n % 3], null);
      }
      const { packed, transfer } = packer.pack(batchOf(values, stride));
      expect(transfer).toHaveLength(2);
      // Store ids, departments and the time repeat: after the first batch they travel as codes only.
      if (batchNumber > 1) expect(packed.newEntries).toEqual([]);
      // Past the dictionary's first entries, only the first row of each receipt sends its two ids.
      if (batchNumber > 1) expect(packed.textCount).toBeLessThanOrEqual(2 * Math.ceil(1000 / 3) + 2);
      const back = unpacker.unpack(acrossThreads(packed));
      expect(back).toEqual(batchOf(values, stride));
    }
  });

  it('round-trips any values, including separators inside strings, empty strings, -0, NaN and huge ids (fast-check)', () => {
    const value = fc.oneof(
      fc.constant(null),
      fc.double(),
      fc.integer(),
      fc.constantFrom('', 'fresh', 'S01', '\u0000', 'a\u0000b', '\u0001'),
      fc.string({ maxLength: 40 }),
    );
    fc.assert(
      fc.property(fc.integer({ min: 1, max: 6 }), fc.array(fc.array(value, { maxLength: 60 }), { maxLength: 6 }), (stride, batches) => {
        const packer = new BatchPacker(stride);
        const unpacker = new BatchUnpacker();
        for (const raw of batches) {
          const values = raw.slice(0, raw.length - (raw.length % stride));
          const sent = batchOf(values, stride);
          expect(unpacker.unpack(acrossThreads(packer.pack(sent).packed))).toEqual(batchOf([...values], stride));
        }
      }),
      { numRuns: 300 },
    );
  });

  it('refuses a bad stride and a damaged batch', () => {
    expect(() => new BatchPacker(0)).toThrow(/stride/);
    const { packed } = new BatchPacker(2).pack(batchOf(['a long string that is not coded, over thirty-two chars', 1], 2));
    expect(packed.textCount).toBe(1);
    expect(() => new BatchUnpacker().unpack({ ...packed, textCount: 2 })).toThrow(/expected 2/);
  });
});
