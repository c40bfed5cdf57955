import { mkdirSync, writeFileSync } from 'node:fs';
import { join } from 'node:path';
import iconv from 'iconv-lite';
import { CATEGORIES, STORES } from './chain.js';
import { MINUTES_PER_DAY, dayOf, formatMinute } from './calendar.js';
import { formatCents } from './generate.js';
import { SeededRandom } from './random.js';

/**
 * Small, deliberately messy files for the import screens and tests, made from seeded rows so
 * they can be regenerated (`npm run -s demo:messy`). Each file comes with a README line saying
 * what is wrong on purpose and the facts a test can check (line numbers count the header as 1).
 */

export const MESSY_SEED = 77;

interface ReceiptRow {
  receiptId: string;
  customerId: string;
  storeId: string;
  /** Minutes from 2025-01-01T00:00. */
  minute: number;
  category: string;
  cents: number;
}

export interface MessyFile {
  name: string;
  /** What is wrong on purpose, and what an importer should do with it. */
  about: string;
  bytes: Buffer;
}

/** Receipt rows like the demo's: customers of the committed sample, 2025–2026 dates. */
function receiptRows(random: SeededRandom, receipts: number, idPrefix: string): ReceiptRow[] {
  const rows: ReceiptRow[] = [];
  const first = dayOf('2025-02-01');
  const span = dayOf('2026-10-31') - first;
  for (let r = 0; r < receipts; r++) {
    const customerId = `C${String(1 + random.index(500)).padStart(5, '0')}`;
    const storeId = STORES[random.index(STORES.length)].id;
    const minute = (first + random.index(span)) * MINUTES_PER_DAY + (8 + random.index(13)) * 60 + random.index(60);
    const departments = 1 + random.index(3);
    const start = random.index(CATEGORIES.length - departments + 1);
    for (let d = 0; d < departments; d++) {
      rows.push({
        receiptId: `${idPrefix}${String(r + 1).padStart(5, '0')}`,
        customerId,
        storeId,
        minute,
        category: CATEGORIES[start + d],
        cents: 50 + random.index(6000),
      });
    }
  }
  return rows;
}

const STANDARD_HEADER = 'receipt_id,customer_id,store_id,date,category,amount';
const standardLine = (row: ReceiptRow, date = formatMinute(row.minute), amount = formatCents(row.cents)) =>
  `${row.receiptId},${row.customerId},${row.storeId},${date},${row.category},${amount}`;

const utf8 = (lines: string[], lineEnd = '\n') => Buffer.from(lines.map((line) => `${line}${lineEnd}`).join(''), 'utf8');

/** 1-based file line numbers (header = line 1) of data rows picked by `every`. */
function pickLines(rowCount: number, every: number, offset: number): number[] {
  const lines: number[] = [];
  for (let row = offset; row < rowCount; row += every) lines.push(row + 2);
  return lines;
}

export function buildMessyFiles(seed = MESSY_SEED): MessyFile[] {
  const random = new SeededRandom(seed);
  const files: MessyFile[] = [];

  {
    const rows = receiptRows(random, 12, 'MA');
    const header = 'Till Slip,Loyalty Ref,Outlet,Purchased At,Aisle Group,Paid EUR';
    files.push({
      name: 'wrong-column-names.csv',
      about: `Receipts whose headers match no field name (Till Slip, Loyalty Ref, Outlet, Purchased At, Aisle Group, Paid EUR): the columns must be mapped to receipt_id, customer_id, store_id, date, category, amount by hand. ${rows.length} rows, otherwise clean.`,
      bytes: utf8([header, ...rows.map((row) => standardLine(row))]),
    });
  }

  {
    const rows = receiptRows(random, 50, 'MB');
    const badDates = ['2025-02-30T10:15:00', '2025-13-04T09:20:00', 'yesterday', ''];
    const badLines = pickLines(rows.length, Math.floor(rows.length / badDates.length), 7).slice(0, badDates.length);
    const badShare = (100 * badDates.length) / rows.length;
    if (badShare >= 5) throw new Error('bad-dates.csv must stay under the 5 % rejection threshold');
    const lines = rows.map((row, index) => {
      const bad = badLines.indexOf(index + 2);
      return bad >= 0 ? standardLine(row, badDates[bad]) : standardLine(row);
    });
    files.push({
      name: 'bad-dates.csv',
      about: `Receipts with ${badDates.length} bad dates in ${rows.length} rows (${badShare.toFixed(1)} %, under the default 5 % threshold): a 30 February, a month 13, the word "yesterday" and an empty date, on lines ${badLines.join(', ')}. The file imports with those ${badDates.length} rows rejected and listed by line number.`,
      bytes: utf8([STANDARD_HEADER, ...lines]),
    });
  }

  {
    const rows = receiptRows(random, 10, 'MC');
    const total = rows.reduce((sum, row) => sum + row.cents, 0);
    files.push({
      name: 'decimal-comma-semicolon.csv',
      about: `Receipts with a semicolon delimiter and decimal commas ("12,34"), no thousands separators: read with the decimal-comma setting. ${rows.length} rows, amounts total ${formatCents(total)} EUR.`,
      bytes: utf8([
        STANDARD_HEADER.replaceAll(',', ';'),
        ...rows.map((row) =>
          [row.receiptId, row.customerId, row.storeId, formatMinute(row.minute), row.category, formatCents(row.cents).replace('.', ',')].join(';'),
        ),
      ]),
    });
  }

  {
    // Every day of month is 1–12, so each date reads both ways; the file is written day-first.
    const rows = receiptRows(random, 10, 'MD').map((row) => {
      const day = Math.floor(row.minute / MINUTES_PER_DAY);
      const date = formatMinute(row.minute).slice(0, 10);
      const dayOfMonth = 1 + (Number(date.slice(8, 10)) % 12);
      const fixedDay = day - Number(date.slice(8, 10)) + dayOfMonth;
      return { ...row, minute: fixedDay * MINUTES_PER_DAY + (row.minute % MINUTES_PER_DAY) };
    });
    const dayFirst = (minute: number) => {
      const iso = formatMinute(minute);
      return `${iso.slice(8, 10)}/${iso.slice(5, 7)}/${iso.slice(0, 4)} ${iso.slice(11, 16)}`;
    };
    const firstIso = formatMinute(rows[0].minute).slice(0, 10);
    files.push({
      name: 'ambiguous-day-month.csv',
      about: `Receipts with dates like "${dayFirst(rows[0].minute)}" where every day of month is 12 or less, so day-first and month-first both parse: the file is written day-first (its first row is ${firstIso}) and must not be guessed; the importer has to ask. ${rows.length} rows.`,
      bytes: utf8([STANDARD_HEADER, ...rows.map((row) => standardLine(row, dayFirst(row.minute)))]),
    });
  }

  {
    const rows = receiptRows(random, 8, 'ME');
    files.push({
      name: 'missing-amount-column.csv',
      about: `Receipts without the required amount column (receipt_id, customer_id, store_id, date, category only): the file is refused with a message naming the missing field. ${rows.length} rows.`,
      bytes: utf8([
        'receipt_id,customer_id,store_id,date,category',
        ...rows.map((row) => `${row.receiptId},${row.customerId},${row.storeId},${formatMinute(row.minute)},${row.category}`),
      ]),
    });
  }

  {
    const rows = receiptRows(random, 8, 'MF');
    const accented: Record<string, string> = {
      fresh: 'fruits et légumes',
      bakery: 'boulangerie-pâtisserie',
      dairy: 'crèmerie',
      meat: 'boucherie',
      pantry: 'épicerie',
      frozen: 'surgelés',
      drinks: 'boissons',
      household: 'entretien',
      personal_care: 'hygiène & beauté',
    };
    const text = [STANDARD_HEADER, ...rows.map((row) => `${row.receiptId},${row.customerId},${row.storeId},${formatMinute(row.minute)},${accented[row.category]},${formatCents(row.cents)}`)]
      .map((line) => `${line}\r\n`)
      .join('');
    files.push({
      name: 'windows-1252.csv',
      about: `Receipts encoded in Windows-1252 (not UTF-8), CRLF line ends, with accented department names ("crèmerie", "épicerie", "surgelés"): read as UTF-8 the accents turn into replacement characters; choose the Windows-1252 encoding. ${rows.length} rows.`,
      bytes: iconv.encode(text, 'win1252'),
    });
  }

  {
    const rows = receiptRows(random, 6, 'MG');
    const quoted = (row: ReceiptRow) =>
      `"${row.receiptId}","${row.customerId}","${row.storeId}","${formatMinute(row.minute)}","${row.category === 'fresh' ? 'fresh, loose' : row.category}","${formatCents(row.cents)}"`;
    files.push({
      name: 'bom-crlf-quoted.csv',
      about: `Valid receipts with a UTF-8 byte-order mark, CRLF line ends and every field quoted (one department "fresh, loose" holds a comma): imports cleanly, ${rows.length} rows.`,
      bytes: Buffer.concat([Buffer.from([0xef, 0xbb, 0xbf]), utf8([STANDARD_HEADER, ...rows.map(quoted)], '\r\n')]),
    });
  }

  {
    const rows = receiptRows(random, 10, 'MH');
    const repeated = [rows[1], rows[4], rows[rows.length - 1]];
    files.push({
      name: 'duplicate-rows.csv',
      about: `Receipts where ${repeated.length} rows appear twice (same receipt_id and category, at the end of the file): ${rows.length + repeated.length} data rows, ${rows.length} distinct; the repeats are skipped as duplicates.`,
      bytes: utf8([STANDARD_HEADER, ...rows.map((row) => standardLine(row)), ...repeated.map((row) => standardLine(row))]),
    });
  }

  {
    const rows = receiptRows(random, 30, 'MI');
    const badAmounts = ['abc', '12.3.4', '', 'n/a', '--2.00', '7..50'];
    const badLines = pickLines(rows.length, Math.floor(rows.length / badAmounts.length), 3).slice(0, badAmounts.length);
    const lines = rows.map((row, index) => {
      const bad = badLines.indexOf(index + 2);
      return bad >= 0 ? standardLine(row, undefined, badAmounts[bad]) : standardLine(row);
    });
    files.push({
      name: 'bad-amounts.csv',
      about: `Receipts with ${badAmounts.length} unreadable amounts (${badAmounts.map((a) => JSON.stringify(a)).join(', ')}) on lines ${badLines.join(', ')} of ${rows.length} rows, ${((100 * badAmounts.length) / rows.length).toFixed(1)} %: far above the 5 % threshold, so the file is refused as a whole with every bad row listed.`,
      bytes: utf8([STANDARD_HEADER, ...lines]),
    });
  }

  return files;
}

/** Writes the messy files and their README into `folder`. */
export function writeMessyFiles(folder: string, seed = MESSY_SEED): MessyFile[] {
  const files = buildMessyFiles(seed);
  mkdirSync(folder, { recursive: true });
  for (const file of files) writeFileSync(join(folder, file.name), file.bytes);
  writeFileSync(join(folder, 'README.md'), messyReadme(files));
  return files;
}

export function messyReadme(files: MessyFile[]): string {
  return [
    '# Deliberately messy import files (invented data)',
    '',
    'Made by `npm run -s demo:messy` (src/demo/messy.ts, seeded); do not edit by hand.',
    'Customer ids are those of the committed sample; receipt ids start with M so they never clash',
    'with it. Line numbers count the header as line 1.',
    '',
    ...files.map((file) => `- \`${file.name}\`: ${file.about}`),
    '',
  ].join('\n');
}
