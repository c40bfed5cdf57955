import fc from 'fast-check';
import iconv from 'iconv-lite';
import { join } from 'node:path';
import { describe, expect, it } from 'vitest';
import { InputError } from '../../src/errors.js';
import { importFile, type ImportResult } from '../../src/ingest/import-file.js';
import { openDatabase } from '../../src/store/database.js';
import type { ImportKind } from '../../src/store/imports-repo.js';
import { snapshotCounts, temporaryFolder, writeText } from './support.js';

/** Cells that are valid for some field, nearly valid, or junk. */
const cellText = fc.oneof(
  fc.constantFrom('C1', 'C2', 'C3', 'R1', 'R2', 'S01', 'fresh', 'dairy', 'store', 'online', 'yes', 'no', ''),
  fc.constantFrom('2025-01-02', '2025-01-02T10:00:00', '02/01/2025', '2025-02-30', '2025-13-01', 'yesterday', '2025-01-02 7:05'),
  fc.constantFrom('12.50', '-3.20', '12,50', '1.234,56', '1,234.56', '(4.00)', 'abc', '12.345', '0', '7..50', '€ 5'),
  fc.string({ unit: fc.constantFrom('a', '1', ',', ';', '"', '\n', '\r', ' ', 'é', '€', '\t', '|', '.', '-'), maxLength: 6 }),
);

/** Valid spellings per field, so most generated rows pass and the importer's write path is fuzzed too. */
const VALID: Record<string, string[]> = {
  customer_id: ['C1', 'C2', 'C3', 'C4', ' C5 ', 'Zoë'],
  date: ['2025-01-02', '2025-01-02T10:00:00', '2025-03-31 23:59:59', '2026-11-30T08:15'],
  amount: ['12.50', '-3.20', '0', '1,234.56', '7', '0.99'],
  receipt_id: ['R1', 'R2', 'R3', ''],
  store_id: ['S01', 'S02', ''],
  category: ['fresh', 'dairy', 'crème', ''],
  items: ['1', '3', '', '-1'],
  channel: ['store', 'online', ''],
  joined: ['2024-05-01', ''],
  marketing_consent: ['yes', 'no', 'Y', ''],
  home_store: ['S01', ''],
  spend: ['1.5', '200', '', '3e2'],
  visits: ['4', '0.5', ''],
  notes: ['anything', '', '"quoted"'],
};

const FIELDS: Record<ImportKind, string[]> = {
  receipts: ['customer_id', 'date', 'amount', 'receipt_id', 'store_id', 'category', 'items'],
  visits: ['customer_id', 'date', 'store_id', 'channel'],
  customers: ['customer_id', 'joined', 'marketing_consent', 'home_store'],
  features: ['customer_id', 'spend', 'visits'],
};

function quote(cell: string, delimiter: string, always: boolean): string {
  return always || /["\r\n]/.test(cell) || cell.includes(delimiter) ? `"${cell.replace(/"/g, '""')}"` : cell;
}

const fileCase = fc.record({
  kind: fc.constantFrom<ImportKind>('receipts', 'receipts', 'visits', 'customers', 'features'),
  dropRequired: fc.constantFrom(false, false, false, true),
  extraColumn: fc.boolean(),
  shuffle: fc.array(fc.nat(), { minLength: 8, maxLength: 8 }),
  rows: fc.array(fc.array(cellText, { minLength: 0, maxLength: 9 }), { maxLength: 14 }),
  validCells: fc.array(fc.array(fc.nat({ max: 19 }), { minLength: 9, maxLength: 9 }), { minLength: 14, maxLength: 14 }),
  fixWidth: fc.array(fc.constantFrom(true, true, true, true, true, true, true, true, true, false), { minLength: 14, maxLength: 14 }),
  delimiter: fc.constantFrom(',', ';', '\t', '|'),
  lineEnd: fc.constantFrom('\n', '\r\n'),
  quoteAll: fc.boolean(),
  bom: fc.boolean(),
  encoding: fc.constantFrom('utf8', 'utf8', 'win1252'),
  damage: fc.constantFrom('none', 'none', 'none', 'none', 'none', 'none', 'none', 'none', 'truncate', 'unclosed', 'binary', 'empty'),
  cut: fc.nat(),
  maxRejectedShare: fc.constantFrom(0, 0.05, 0.2, 0.5, 1),
  dateFormat: fc.constantFrom('iso' as const, 'day-first' as const, 'month-first' as const),
  decimalComma: fc.boolean(),
  reimport: fc.boolean(),
});

type FileCase = typeof fileCase extends fc.Arbitrary<infer T> ? T : never;

function buildFile(sample: FileCase): Buffer {
  const fields = [...FIELDS[sample.kind]];
  if (sample.dropRequired) fields.splice(sample.shuffle[0] % 2, 1);
  if (sample.extraColumn) fields.push('notes');
  // Deterministic shuffle of the column order.
  const order = fields.map((field, index) => ({ field, key: sample.shuffle[index % 8] + index / 100 })).sort((a, b) => a.key - b.key);
  const header = order.map((entry) => entry.field);
  const lines = [header.map((cell) => quote(cell, sample.delimiter, sample.quoteAll)).join(sample.delimiter)];
  sample.rows.forEach((row, index) => {
    // Mostly the header's width (so values get validated); sometimes as generated (wrong width).
    // A cell is a valid spelling for its field 90% of the time, else the generated junk.
    const cells = sample.fixWidth[index]
      ? header.map((field, column) => {
          const pick = sample.validCells[index][column];
          return pick < 18 ? VALID[field][pick % VALID[field].length] : (row[column] ?? '');
        })
      : row;
    lines.push(cells.map((cell) => quote(cell, sample.delimiter, sample.quoteAll)).join(sample.delimiter));
  });
  let text = lines.join(sample.lineEnd) + sample.lineEnd;
  if (sample.damage === 'unclosed') text = text.replace(sample.delimiter, `${sample.delimiter}"`);
  if (sample.bom) text = `\uFEFF${text}`;
  let bytes = sample.encoding === 'win1252' ? iconv.encode(text.replace(/^\uFEFF/, ''), 'win1252') : Buffer.from(text, 'utf8');
  if (sample.damage === 'truncate') bytes = bytes.subarray(0, sample.cut % (bytes.length + 1));
  if (sample.damage === 'binary') bytes = Buffer.concat([bytes.subarray(0, 20), Buffer.from([0, 159, 146, 150, 0, 255])]);
  if (sample.damage === 'empty') bytes = Buffer.alloc(0);
  return bytes;
}

describe('importer fuzzing (fast-check)', () => {
  it('1,000 generated valid and malformed files: no crash, all or nothing, counts add up', async () => {
    const folder = temporaryFolder('spendmix-fuzz-');
    const db = openDatabase(join(folder, 'fuzz.db'));
    const outcomes = { imported: 0, refused: 0, again: 0 };
    let fileNumber = 0;
    const reasons = new Map<string, number>();
    await fc.assert(
      fc.asyncProperty(fileCase, async (sample) => {
        fileNumber += 1;
        const path = writeText(folder, `f${fileNumber}.csv`, buildFile(sample));
        const before = snapshotCounts(db);
        const options = {
          maxRejectedShare: sample.maxRejectedShare,
          dateFormat: sample.dateFormat,
          decimalComma: sample.decimalComma,
          encoding: sample.encoding === 'win1252' ? ('windows-1252' as const) : ('utf-8' as const),
        };
        let result: ImportResult;
        try {
          result = await importFile(db, { path, kind: sample.kind, options });
        } catch (error) {
          // Only a clear bad-input refusal is allowed, and it leaves everything as it was.
          expect(error).toBeInstanceOf(InputError);
          expect((error as Error).message.length).toBeGreaterThan(10);
          expect(snapshotCounts(db)).toEqual(before);
          outcomes.refused += 1;
          const reason = (error as Error).message.replace(/^\S*f\d+\.csv:? ?/, '').replace(/[\d.]+/g, '#').slice(0, 50);
          reasons.set(reason, (reasons.get(reason) ?? 0) + 1);
          return;
        }
        const after = snapshotCounts(db);
        expect(db.inTransaction).toBe(false);
        if (result.alreadyImported) {
          // Same bytes as an earlier file of the same kind.
          expect(after).toEqual(before);
          return;
        }
        outcomes.imported += 1;
        expect(result.rowsRead).toBe(result.rowsImported + result.rowsRejected + result.duplicatesSkipped);
        expect(result.rowsRejected).toBeLessThanOrEqual(sample.maxRejectedShare * result.rowsRead);
        expect(after.imports).toBe(before.imports + 1);
        if (sample.kind === 'receipts' || sample.kind === 'visits') {
          expect(after[sample.kind] - before[sample.kind]).toBe(result.rowsImported);
        }
        if (sample.kind === 'receipts') {
          const sum = db.prepare('SELECT coalesce(sum(amount_cents), 0) FROM receipts WHERE import_id = (SELECT max(import_id) FROM imports)').pluck().get() as number;
          expect(Math.round(result.amountTotal! * 100)).toBe(sum);
        }
        expect(result.report === null).toBe(result.rowsRejected === 0);
        if (sample.reimport) {
          const again = await importFile(db, { path, kind: sample.kind, options });
          expect(again.alreadyImported).toBe(true);
          expect(snapshotCounts(db)).toEqual(after);
          outcomes.again += 1;
        }
      }),
      { numRuns: 1000 },
    );
    expect(db.pragma('integrity_check', { simple: true })).toBe('ok');
    console.log('most common refusals:', [...reasons].sort((a, b) => b[1] - a[1]).slice(0, 5));
    console.log(`fuzz: ${fileNumber} files, ${outcomes.imported} imported, ${outcomes.refused} refused, ${outcomes.again} recognised as imported before`);
    // The generator must exercise both sides (otherwise the property proves little).
    expect(outcomes.imported).toBeGreaterThan(200);
    expect(outcomes.refused).toBeGreaterThan(100);
    db.close();
  });
});
