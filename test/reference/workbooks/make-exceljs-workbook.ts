/**
 * Writes the exceljs receipts workbook from the same invented receipts as make_workbooks.py
 * (receipts-source.csv), with exceljs's in-memory writer, and records it in expected.json.
 * Run after make_workbooks.py, from the repository root:
 *
 *   npx tsx test/reference/workbooks/make-exceljs-workbook.ts
 */
import ExcelJS from 'exceljs';
import { readFileSync, readdirSync, rmSync, writeFileSync } from 'node:fs';
import { createRequire } from 'node:module';
import { join } from 'node:path';
import { fileURLToPath } from 'node:url';

const here = fileURLToPath(new URL('.', import.meta.url));
const version = (createRequire(import.meta.url)('exceljs/package.json') as { version: string }).version;
const sheetName = 'Receipts';

const lines = readFileSync(join(here, 'receipts-source.csv'), 'utf8').trim().split('\n');
const header = lines[0].split(',');
const rows = lines.slice(1).map((line) => line.split(','));

const workbook = new ExcelJS.Workbook();
workbook.creator = 'Spendmix import fixtures';
const sheet = workbook.addWorksheet(sheetName);
sheet.addRow(header);
let totalCents = 0;
for (const [receipt, customer, date, amount, store] of rows) {
  // exceljs writes a Date as the wall-clock time it holds in UTC.
  const moment = new Date(`${date.length === 10 ? `${date}T00:00:00` : date.replace(' ', 'T')}Z`);
  const row = sheet.addRow([receipt, customer, moment, Number(amount), store]);
  row.getCell(3).numFmt = date.length === 10 ? 'yyyy-mm-dd' : 'yyyy-mm-dd hh:mm:ss';
  row.getCell(4).numFmt = '0.00';
  totalCents += Math.round(Number(amount) * 100);
}

const name = `receipts-exceljs-${version}.xlsx`;
for (const old of readdirSync(here)) if (old.startsWith('receipts-exceljs-') && old !== name) rmSync(join(here, old));
await workbook.xlsx.writeFile(join(here, name));

const expectedPath = join(here, 'expected.json');
const expected = JSON.parse(readFileSync(expectedPath, 'utf8')) as { workbooks: Record<string, unknown> };
for (const key of Object.keys(expected.workbooks)) if (key.startsWith('receipts-exceljs-')) delete expected.workbooks[key];
expected.workbooks[name] = {
  writer: `exceljs ${version} (in-memory writer)`,
  sheet: sheetName,
  rows: rows.length,
  amountTotalCents: totalCents,
  sheets: [sheetName],
  firstSheet: sheetName,
};
writeFileSync(expectedPath, `${JSON.stringify(expected, null, 2)}\n`);
console.log(`wrote ${name}: ${rows.length} rows, ${totalCents} cents`);
