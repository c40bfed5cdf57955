import ExcelJS from 'exceljs';
import iconv from 'iconv-lite';
import { chmodSync, existsSync, readFileSync } from 'node:fs';
import { join } from 'node:path';
import BetterSqlite3 from 'better-sqlite3';
import { describe, expect, it } from 'vitest';
import { CancelledError, InputError } from '../../src/errors.js';
import { importFile, type ImportProgress } from '../../src/ingest/import-file.js';
import { openDatabase } from '../../src/store/database.js';
import { customerConsent } from '../../src/store/customers-repo.js';
import { listImports, savedMapping } from '../../src/store/imports-repo.js';
import { dayFromIsoDate } from '../../src/store/days.js';
import { writeReceiptsFile } from '../bench/import-receipts-file.js';
import { freshDatabase, snapshotCounts, temporaryFolder, writeText } from './support.js';

const HEADER = 'receipt_id,customer_id,store_id,date,category,amount\n';

async function expectRefused(promise: Promise<unknown>, pattern: RegExp): Promise<void> {
  await expect(promise).rejects.toBeInstanceOf(InputError);
  await expect(promise).rejects.toThrow(pattern);
}

describe('monthly cycle (DESIGN.md §3)', () => {
  it('month 1, then months 1–2 overlapping: no duplicates, amounts add up, re-import recognised', async () => {
    const { folder, db } = freshDatabase();
    const month1 = writeText(
      folder,
      'm1.csv',
      HEADER + 'R1,C1,S01,2025-01-05T10:00:00,fresh,10.00\nR1,C1,S01,2025-01-05T10:00:00,bakery,2.50\nR2,C2,S02,2025-01-20T11:00:00,fresh,-1.25\n',
    );
    const months12 = writeText(
      folder,
      'm12.csv',
      HEADER +
        'R1,C1,S01,2025-01-05T10:00:00,fresh,10.00\nR1,C1,S01,2025-01-05T10:00:00,bakery,2.50\nR2,C2,S02,2025-01-20T11:00:00,fresh,-1.25\n' +
        'R3,C1,S01,2025-02-02T09:30:00,dairy,4.10\nR4,C3,S03,2025-02-14T18:00:00,meat,20.00\n',
    );
    const first = await importFile(db, { path: month1, kind: 'receipts' });
    expect(first).toEqual({
      importId: 1,
      file: month1,
      kind: 'receipts',
      rowsRead: 3,
      rowsImported: 3,
      rowsRejected: 0,
      duplicatesSkipped: 0,
      alreadyImported: false,
      amountTotal: 11.25,
      report: null,
    });
    const second = await importFile(db, { path: months12, kind: 'receipts' });
    expect(second).toMatchObject({ rowsRead: 5, rowsImported: 2, duplicatesSkipped: 3, amountTotal: 24.1, alreadyImported: false });
    const again = await importFile(db, { path: months12, kind: 'receipts' });
    expect(again).toMatchObject({ alreadyImported: true, rowsImported: 0, importId: null });
    expect(db.prepare('SELECT count(*) FROM receipts').pluck().get()).toBe(5);
    expect(db.prepare('SELECT sum(amount_cents) FROM receipts').pluck().get()).toBe(1125 + 2410);
    expect(listImports(db).map((record) => [record.rowsImported, record.duplicatesSkipped])).toEqual([
      [3, 0],
      [2, 3],
    ]);
    // Unknown store ids were recorded.
    expect(db.prepare('SELECT store_id FROM stores ORDER BY 1').pluck().all()).toEqual(['S01', 'S02', 'S03']);
  });

  it('receipts without an id are de-duplicated by customer, date-time, amount, store and category', async () => {
    const { folder, db } = freshDatabase();
    const text =
      'customer_id,date,amount,store_id,category\nC1,2025-03-01T10:00:00,5.00,S1,fresh\nC1,2025-03-01T10:00:00,5.00,S1,fresh\n' +
      'C1,2025-03-01T10:00:00,5.00,S1,dairy\nC1,2025-03-01T10:00:01,5.00,S1,fresh\nC1,2025-03-01T10:00:00,5.00,,fresh\nC1,2025-03-01T10:00:00,5.00,,fresh\n';
    const result = await importFile(db, { path: writeText(folder, 'noid.csv', text), kind: 'receipts' });
    expect(result).toMatchObject({ rowsRead: 6, rowsImported: 4, duplicatesSkipped: 2 });
  });

  it('customers: later files update earlier values (consent changes); empty cells keep what was known', async () => {
    const { folder, db } = freshDatabase();
    const first = writeText(folder, 'c1.csv', 'customer_id,joined,marketing_consent,home_store\nC1,2024-01-02,yes,S01\nC2,2024-02-03,no,S02\nC3,,,\n');
    const second = writeText(folder, 'c2.csv', 'customer_id,marketing_consent\nC1,no\nC2,no\nC3,yes\n');
    expect(await importFile(db, { path: first, kind: 'customers' })).toMatchObject({ rowsImported: 3, amountTotal: null });
    expect(await importFile(db, { path: second, kind: 'customers' })).toMatchObject({ rowsRead: 3, rowsImported: 2, duplicatesSkipped: 1 });
    expect(Object.fromEntries(customerConsent(db))).toEqual({ C1: 0, C2: 0, C3: 1 });
    expect(db.prepare("SELECT joined, home_store FROM customers WHERE customer_id = 'C1'").get()).toEqual({ joined: '2024-01-02', home_store: 'S01' });
  });

  it('visits de-duplicated by their natural key', async () => {
    const { folder, db } = freshDatabase();
    const text = 'customer_id,date,store_id,channel\nC1,2025-01-01T08:00:00,S1,store\nC1,2025-01-01T08:00:00,S1,store\nC1,2025-01-01,,online\n';
    const result = await importFile(db, { path: writeText(folder, 'v.csv', text), kind: 'visits' });
    expect(result).toMatchObject({ rowsRead: 3, rowsImported: 2, duplicatesSkipped: 1, amountTotal: null });
    expect(db.prepare('SELECT day FROM visits ORDER BY row_id').pluck().all()).toEqual([dayFromIsoDate('2025-01-01'), dayFromIsoDate('2025-01-01')]);
  });

  it('features: every column besides customer_id is a feature; re-sent unchanged values are duplicates', async () => {
    const { folder, db } = freshDatabase();
    const text = 'Customer,spend_per_month,visits_per_month\nC1,120.5,4\nC2,,2\n';
    expect(await importFile(db, { path: writeText(folder, 'f.csv', text), kind: 'features' })).toMatchObject({ rowsImported: 2 });
    const text2 = 'Customer,spend_per_month,visits_per_month\nC1,120.5,4\nC2,80,2\n';
    expect(await importFile(db, { path: writeText(folder, 'f2.csv', text2), kind: 'features' })).toMatchObject({
      rowsImported: 1,
      duplicatesSkipped: 1,
    });
    expect(db.prepare("SELECT feature, value FROM customer_features WHERE customer_id = 'C2' ORDER BY feature").all()).toEqual([
      { feature: 'spend_per_month', value: 80 },
      { feature: 'visits_per_month', value: 2 },
    ]);
  });
});

describe('encodings and layouts', () => {
  it('a Windows-1252 file with € and accented names is refused as not UTF-8, then decodes correctly when chosen', async () => {
    const { folder, db } = freshDatabase();
    // 0x80 is € in Windows-1252 (the WHATWG Encoding Standard's index-windows-1252); é is 0xE9.
    const text = 'customer_id;date;amount;category\r\nC1;2025-01-02;€ 12,50;crèmerie\r\nC2;2025-01-02;3,10;épicerie fine – Zoë\r\n';
    const bytes = iconv.encode(text, 'win1252');
    expect(bytes.includes(0x80)).toBe(true);
    const path = writeText(folder, 'w1252.csv', bytes);
    await expect(importFile(db, { path, kind: 'receipts', options: { decimalComma: true } })).rejects.toThrow(
      /is not UTF-8 text: line 2 has bytes that UTF-8 does not allow \(80 20 31 32\).*--encoding windows-1252/,
    );
    expect(db.prepare('SELECT count(*) FROM receipts').pluck().get()).toBe(0);
    const result = await importFile(db, { path, kind: 'receipts', options: { decimalComma: true, encoding: 'windows-1252' } });
    expect(result).toMatchObject({ rowsImported: 2, amountTotal: 15.6 });
    expect(db.prepare('SELECT category FROM receipts ORDER BY row_id').pluck().all()).toEqual(['crèmerie', 'épicerie fine – Zoë']);
  });

  it('UTF-8 with BOM, CRLF, every field quoted, a comma inside a field', async () => {
    const { folder, db } = freshDatabase();
    const text = '\uFEFF"customer_id","date","amount","category"\r\n"C1","2025-01-02","1.00","fresh, loose"\r\n';
    await importFile(db, { path: writeText(folder, 'bom.csv', text), kind: 'receipts' });
    expect(db.prepare('SELECT customer_id, category FROM receipts').get()).toEqual({ customer_id: 'C1', category: 'fresh, loose' });
  });

  it('XLSX: first sheet by default, a named sheet, and the sheet names in errors', async () => {
    const { folder, db } = freshDatabase();
    const workbook = new ExcelJS.Workbook();
    const notes = workbook.addWorksheet('Notes');
    notes.addRow(['just', 'notes']);
    const sheet = workbook.addWorksheet('January');
    sheet.addRow(['Card Number', 'Purchase Date', 'Total', 'Items']);
    sheet.addRow(['C1', new Date(Date.UTC(2025, 0, 3)), 12.5, 2]);
    sheet.addRow(['C2', '2025-01-04T10:11:12', -3, null]);
    const path = join(folder, 'book.xlsx');
    await workbook.xlsx.writeFile(path);
    await expectRefused(importFile(db, { path, kind: 'receipts' }), /lacks required columns.*"Notes", "January".*--sheet/s);
    await expectRefused(importFile(db, { path, kind: 'receipts', options: { sheet: 'Feb' } }), /no sheet "Feb".*"Notes", "January"/);
    const result = await importFile(db, { path, kind: 'receipts', options: { sheet: 'January' } });
    expect(result).toMatchObject({ rowsRead: 2, rowsImported: 2, amountTotal: 9.5 });
    expect(db.prepare('SELECT customer_id, day, time, items FROM receipts ORDER BY row_id').all()).toEqual([
      { customer_id: 'C1', day: dayFromIsoDate('2025-01-03'), time: null, items: 2 },
      { customer_id: 'C2', day: dayFromIsoDate('2025-01-04'), time: '10:11:12', items: null },
    ]);
  });
});

describe('mapping', () => {
  it('--map style explicit mapping, saved per kind and offered again next time', async () => {
    const { folder, db } = freshDatabase();
    const header = 'Till Slip,Loyalty Ref,Purchased At,Paid EUR\n';
    const first = writeText(folder, 'a.csv', header + 'T1,C1,2025-01-01,1.00\n');
    const second = writeText(folder, 'b.csv', header + 'T2,C1,2025-02-01,2.00\n');
    await expectRefused(importFile(db, { path: first, kind: 'receipts' }), /lacks required columns customer_id, date, amount.*"Till Slip", "Loyalty Ref"/);
    const mapping = { 'Till Slip': 'receipt_id', 'Loyalty Ref': 'customer_id', 'Purchased At': 'date', 'Paid EUR': 'amount' };
    await importFile(db, { path: first, kind: 'receipts', mapping });
    expect(savedMapping(db, 'receipts')).toEqual(mapping);
    expect(await importFile(db, { path: second, kind: 'receipts' })).toMatchObject({ rowsImported: 1 });
  });

  it('common English synonyms map automatically', async () => {
    const { folder, db } = freshDatabase();
    const path = writeText(folder, 's.csv', 'Card ID,Transaction Date,Total,Store,Department,Qty\nC1,2025-01-01,1.00,S1,fresh,3\n');
    await importFile(db, { path, kind: 'receipts' });
    expect(db.prepare('SELECT customer_id, store_id, category, items FROM receipts').get()).toEqual({ customer_id: 'C1', store_id: 'S1', category: 'fresh', items: 3 });
  });
});

describe('validation and refusals leave the database unchanged', () => {
  it('rejected rows go to a report next to the database; above the threshold the file is refused', async () => {
    const { folder, db } = freshDatabase();
    const rows = Array.from({ length: 40 }, (_, index) => `R${index},C1,S1,2025-01-01,fresh,1.00`);
    rows[3] = 'R3,C1,S1,2025-02-30,fresh,1.00';
    rows[7] = 'R7,C1,S1,2025-01-01,fresh,abc';
    rows[9] = 'R9,C1,S1,2025-01-01,fresh';
    const path = writeText(folder, 'bad.csv', HEADER + rows.join('\n') + '\n');
    const before = snapshotCounts(db);
    await expectRefused(importFile(db, { path, kind: 'receipts' }), /3 of 40 rows \(7\.5%\).*above the 5\.0% limit/);
    expect(snapshotCounts(db)).toEqual(before);
    const result = await importFile(db, { path, kind: 'receipts', options: { maxRejectedShare: 0.1 } });
    expect(result).toMatchObject({ rowsRead: 40, rowsImported: 37, rowsRejected: 3 });
    expect(result.report).toBe(join(folder, result.report!.split('/').pop()!));
    const report = readFileSync(result.report!, 'utf8').trim().split('\n');
    expect(report).toEqual([
      'line,column,value,reason',
      '5,date,2025-02-30,no such calendar date',
      '9,amount,abc,amount is not a number',
      '11,,"R9,C1,S1,2025-01-01,fresh","expected 6 columns, found 5"',
    ]);
  });

  it('bad files: each a clear InputError, nothing written', async () => {
    const { folder, db } = freshDatabase();
    const before = snapshotCounts(db);
    const cases: Array<[string, string | Buffer, RegExp]> = [
      ['empty.csv', '', /is empty/],
      ['blank.csv', '\n\n', /no header row/],
      ['header-only.csv', HEADER, /no data rows/],
      ['binary.csv', Buffer.from([0x00, 0x01, 0x02, 0xff, 0x00, 0x10]), /binary/],
      ['unclosed.csv', HEADER + 'R1,C1,S1,2025-01-01,"fresh,1.00\nR2,C1,S1,2025-01-01,fresh,1.00\n', /Unclosed quote.*line 2/],
      ['missing.csv', 'receipt_id,customer_id,store_id,date,category\nR1,C1,S1,2025-01-01,fresh\n', /lacks required column amount.*Columns found: "receipt_id"/],
      ['truncated.xlsx', Buffer.concat([Buffer.from('PK\x03\x04'), Buffer.alloc(60, 7)]), /XLSX/],
    ];
    for (const [name, content, pattern] of cases) {
      await expectRefused(importFile(db, { path: writeText(folder, name, content), kind: 'receipts' }), pattern);
    }
    await expectRefused(importFile(db, { path: join(folder, 'nope.csv'), kind: 'receipts' }), /Cannot read/);
    expect(snapshotCounts(db)).toEqual(before);
  });

  it('non-ISO dates are refused with the option to choose, and read when chosen', async () => {
    const { folder, db } = freshDatabase();
    const path = writeText(folder, 'dmy.csv', 'customer_id,date,amount\nC1,03/06/2026 12:16,1.00\n');
    await expectRefused(importFile(db, { path, kind: 'receipts' }), /--date-format/);
    await importFile(db, { path, kind: 'receipts', options: { dateFormat: 'day-first' } });
    expect(db.prepare('SELECT day, time FROM receipts').get()).toEqual({ day: dayFromIsoDate('2026-06-03'), time: '12:16:00' });
  });

  it('a locked database is refused clearly and keeps its content', async () => {
    const { folder, db } = freshDatabase();
    const path = writeText(folder, 'r.csv', HEADER + 'R1,C1,S1,2025-01-01,fresh,1.00\n');
    const other = new BetterSqlite3(db.name);
    other.exec('BEGIN IMMEDIATE');
    db.pragma('busy_timeout = 50');
    await expectRefused(importFile(db, { path, kind: 'receipts' }), /locked/);
    other.exec('ROLLBACK');
    other.close();
    expect(db.prepare('SELECT count(*) FROM imports').pluck().get()).toBe(0);
  });

  it('a read-only database file is refused clearly', async () => {
    if (process.getuid?.() === 0) {
      // root ignores file permissions; open the database read-only instead.
      const { folder, db } = freshDatabase();
      db.close();
      const readonly = new BetterSqlite3(join(folder, 'spendmix.db'), { readonly: true });
      const path = writeText(folder, 'r.csv', HEADER + 'R1,C1,S1,2025-01-01,fresh,1.00\n');
      await expectRefused(importFile(readonly, { path, kind: 'receipts' }), /cannot be written|read-only/);
      return;
    }
    const { folder, db } = freshDatabase();
    db.close();
    chmodSync(join(folder, 'spendmix.db'), 0o444);
    expect(() => openDatabase(join(folder, 'spendmix.db'))).toThrow(InputError);
  });
});

describe('progress, cancellation and the worker path', () => {
  it('reports progress phases with rows and bytes, and a cancelled import changes nothing', async () => {
    const { folder, db } = freshDatabase();
    const path = join(folder, 'big.csv');
    writeReceiptsFile(path, { rows: 20_000, customers: 500 });
    const phases = new Set<string>();
    let last: ImportProgress | undefined;
    const before = snapshotCounts(db);
    const controller = new AbortController();
    const cancelled = importFile(db, {
      path,
      kind: 'receipts',
      signal: controller.signal,
      onProgress: (progress) => {
        if (progress.phase === 'reading' && progress.rows > 5_000) controller.abort();
      },
    });
    await expect(cancelled).rejects.toBeInstanceOf(CancelledError);
    expect(snapshotCounts(db)).toEqual(before);
    await importFile(db, {
      path,
      kind: 'receipts',
      onProgress: (progress) => {
        phases.add(progress.phase);
        last = progress;
      },
    });
    expect([...phases]).toEqual(['checking', 'reading', 'committing', 'done']);
    expect(last).toMatchObject({ phase: 'done', rows: 20_000, totalBytes: readFileSync(path).length });
  });

  it('the worker-thread path gives the same result and rows as the single-thread path', async () => {
    const folder = temporaryFolder();
    const path = join(folder, 'r.csv');
    const written = writeReceiptsFile(path, { rows: 30_000, customers: 2_000 });
    const lines = readFileSync(path, 'utf8').split('\n');
    lines[100] = lines[100].replace(/,[^,]*$/, ',oops');
    const { writeFileSync } = await import('node:fs');
    writeFileSync(path, lines.join('\n'));
    const results = [];
    const contents = [];
    for (const parseInWorker of [false, true]) {
      const db = openDatabase(join(folder, `db-${parseInWorker}.db`));
      const result = await importFile(db, { path, kind: 'receipts', options: { parseInWorker } });
      results.push({ ...result, report: result.report ? readFileSync(result.report, 'utf8') : null });
      contents.push(db.prepare('SELECT receipt_id, customer_id, day, time, amount_cents, store_id, category FROM receipts ORDER BY row_id').raw().all());
      db.close();
    }
    expect(results[1]).toEqual(results[0]);
    expect(results[0]).toMatchObject({ rowsRead: written.rows, rowsRejected: 1, rowsImported: written.rows - 1 });
    expect(contents[1]).toEqual(contents[0]);
    expect(existsSync(path)).toBe(true);
  });
});
