import { join } from 'node:path';
import { describe, expect, it } from 'vitest';
import { importFile } from '../../src/ingest/import-file.js';
import { previewFile } from '../../src/ingest/preview.js';
import { openDatabase } from '../../src/store/database.js';
import { temporaryFolder, writeText } from './support.js';

describe('preview (first rows as they would be read)', () => {
  it('shows raw cells, parsed values and the reason a row would be rejected', async () => {
    const folder = temporaryFolder();
    const path = writeText(
      folder,
      'p.csv',
      'customer_id;date;amount;category\nC1;2025-01-02T10:00:00;12,50;fresh\nC2;2025-02-30;1,00;dairy\nC3;2025-01-03;x;dairy\n',
    );
    const preview = await previewFile(undefined, { path, kind: 'receipts', decimalComma: true, rows: 2 });
    expect(preview).toMatchObject({ columns: ['customer_id', 'date', 'amount', 'category'], delimiter: ';', encoding: 'utf-8', missingFields: [], mappingSource: 'automatic' });
    expect(preview.rows).toEqual([
      {
        line: 2,
        cells: { customer_id: 'C1', date: '2025-01-02T10:00:00', amount: '12,50', category: 'fresh' },
        parsed: { receipt_id: null, customer_id: 'C1', date: '2025-01-02', time: '10:00:00', amount: 12.5, store_id: null, category: 'fresh', items: null },
        problem: null,
      },
      { line: 3, cells: { customer_id: 'C2', date: '2025-02-30', amount: '1,00', category: 'dairy' }, parsed: null, problem: 'date: no such calendar date' },
    ]);
    expect(preview.fields.find((field) => field.field === 'amount')).toMatchObject({ required: true });
  });

  it('lists missing required fields instead of refusing, and offers the saved mapping next time', async () => {
    const folder = temporaryFolder();
    const db = openDatabase(join(folder, 'db.db'));
    const path = writeText(folder, 'm.csv', 'Loyalty Ref,Purchased At,Paid EUR\nC1,2025-01-01,1.00\n');
    const before = await previewFile(db, { path, kind: 'receipts' });
    expect(before.missingFields).toEqual(['customer_id', 'date', 'amount']);
    expect(before.rows[0].problem).toMatch(/not mapped/);
    const mapping = { 'Loyalty Ref': 'customer_id', 'Purchased At': 'date', 'Paid EUR': 'amount' };
    await importFile(db, { path, kind: 'receipts', mapping });
    const next = writeText(folder, 'n.csv', 'Loyalty Ref,Purchased At,Paid EUR\nC2,2025-02-01,2.00\n');
    const after = await previewFile(db, { path: next, kind: 'receipts' });
    expect(after).toMatchObject({ mappingSource: 'saved', missingFields: [], mapping });
    expect(after.rows[0].parsed).toMatchObject({ customer_id: 'C2', amount: 2 });
  });
});
