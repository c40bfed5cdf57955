/**
 * Workbooks written by independent programs (test/reference/workbooks, made by the committed
 * make_workbooks.py and make-exceljs-workbook.ts from one table of invented receipts) import
 * exactly: the row count and amount total recorded when they were written, and row for row the
 * same receipts (ids, day, time of day, cents, store) as the CSV they were written from.
 */
import { readFileSync } from 'node:fs';
import { join } from 'node:path';
import { beforeAll, describe, expect, it } from 'vitest';
import { importFile } from '../../src/ingest/import-file.js';
import { previewFile } from '../../src/ingest/preview.js';
import type { Database } from '../../src/store/database.js';
import { freshDatabase } from './support.js';

const here = new URL('../reference/workbooks/', import.meta.url).pathname;

interface Fixture {
  writer: string;
  sheet: string;
  rows: number;
  amountTotalCents: number;
  sheets: string[];
  firstSheet: string;
  dateSystem?: number;
}

const expected = JSON.parse(readFileSync(join(here, 'expected.json'), 'utf8')) as { rows: number; amountTotalCents: number; workbooks: Record<string, Fixture> };

function receipts(db: Database): unknown[] {
  return db.prepare('SELECT receipt_id, customer_id, day, time, amount_cents, store_id FROM receipts ORDER BY receipt_id').raw().all();
}

describe('workbooks from independent writers', () => {
  let source: unknown[];

  beforeAll(async () => {
    const { db } = freshDatabase();
    const result = await importFile(db, { path: join(here, 'receipts-source.csv'), kind: 'receipts' });
    expect(result).toMatchObject({ rowsImported: expected.rows, amountTotal: expected.amountTotalCents / 100 });
    source = receipts(db);
  });

  it('covers every writer the design names, each file named with its writer and version', () => {
    const names = Object.keys(expected.workbooks);
    for (const writer of [/^receipts-openpyxl-\d/, /^receipts-xlsxwriter-\d.*\d\.xlsx$/, /^receipts-xlsxwriter-.*-date1904/, /^receipts-pandas-.*-openpyxl-/, /^receipts-pandas-.*-xlsxwriter-/, /^receipts-libreoffice-\d/, /^receipts-exceljs-\d/]) {
      expect(names.some((name) => writer.test(name)), String(writer)).toBe(true);
    }
    expect(Object.values(expected.workbooks).some((fixture) => fixture.dateSystem === 1904)).toBe(true);
  });

  for (const [name, fixture] of Object.entries(expected.workbooks)) {
    describe(`${name} (${fixture.writer})`, () => {
      it(`imports ${fixture.rows} rows totalling ${(fixture.amountTotalCents / 100).toFixed(2)}, the same receipts as the CSV`, async () => {
        const { db } = freshDatabase();
        const result = await importFile(db, { path: join(here, name), kind: 'receipts', options: { sheet: fixture.sheet } });
        expect(result).toMatchObject({ rowsRead: fixture.rows, rowsImported: fixture.rows, rowsRejected: 0, amountTotal: fixture.amountTotalCents / 100 });
        expect(receipts(db)).toEqual(source);
      });

      it(`lists the sheets in tab order (${fixture.sheets.join(', ')}) and reads "${fixture.firstSheet}" by default`, async () => {
        const preview = await previewFile(undefined, { path: join(here, name), kind: 'receipts' });
        expect(preview.sheets).toEqual(fixture.sheets);
        const { db } = freshDatabase();
        if (fixture.firstSheet === fixture.sheet) {
          expect(await importFile(db, { path: join(here, name), kind: 'receipts' })).toMatchObject({ rowsImported: fixture.rows });
        } else {
          const tabs = fixture.sheets.map((sheet) => `"${sheet}"`).join(', ');
          await expect(importFile(db, { path: join(here, name), kind: 'receipts' })).rejects.toThrow(
            `Read sheet "${fixture.firstSheet}"; the workbook's sheets: ${tabs} (choose one with --sheet NAME).`,
          );
        }
      });
    });
  }

  it('a sheet that is not there is named, with the sheets as the user sees them', async () => {
    const { db } = freshDatabase();
    await expect(importFile(db, { path: join(here, 'receipts-openpyxl-3.0.9.xlsx'), kind: 'receipts', options: { sheet: 'Receits' } })).rejects.toThrow(
      'The workbook has no sheet "Receits". Its sheets, in tab order: "About", "Receipts"; pass --sheet NAME.',
    );
  });

  it('finds a sheet whatever the case of its name, as spreadsheet programs do', async () => {
    const { db } = freshDatabase();
    expect(await importFile(db, { path: join(here, 'receipts-openpyxl-3.0.9.xlsx'), kind: 'receipts', options: { sheet: 'receipts' } })).toMatchObject({
      rowsImported: expected.rows,
    });
  });
});
