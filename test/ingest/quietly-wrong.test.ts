/**
 * Input that used to import without a word and wrong: bytes that are not UTF-8 (read as
 * Windows-1252 by guess), two columns of one name (the first silently won), dates in years like
 * 0001 or 9999, and a decimal-comma amount called "more than 2 decimals". Each is now refused or
 * reported in words that name the setting to change. Through the CLI, as a user meets them.
 */
import iconv from 'iconv-lite';
import { readFileSync } from 'node:fs';
import { join } from 'node:path';
import { describe, expect, it } from 'vitest';
import { defaultPlausibleDates, importFileInput } from '../../src/api/contract.js';
import { openDatabase } from '../../src/store/database.js';
import { runCliCaptured, temporaryFolder, writeText } from './support.js';

function receiptsCount(dbPath: string): number {
  const db = openDatabase(dbPath);
  try {
    return db.prepare('SELECT count(*) FROM receipts').pluck().get() as number;
  } finally {
    db.close();
  }
}

function goodRows(count: number): string {
  return Array.from({ length: count }, (_, index) => `LM${String(index).padStart(4, '0')},2026-01-05,12.50,bakery\n`).join('');
}

describe('text that is not UTF-8', () => {
  it('is refused naming the line, the bytes (in hex) and the encoding choice; imports when Windows-1252 is chosen', async () => {
    const folder = temporaryFolder();
    const dbPath = join(folder, 'spendmix.db');
    // "Müller Käse" in Windows-1252: ü is 0xFC, ä is 0xE4 (WHATWG Encoding Standard, index-windows-1252).
    const bytes = iconv.encode('customer_id,date,amount,category\nLM001,2026-01-05,12.50,Müller Käse\n', 'win1252');
    const path = writeText(folder, 'latin.csv', bytes);
    const refused = await runCliCaptured(['import', '--db', dbPath, '--receipts', path]);
    expect(refused.code).toBe(2);
    expect(refused.stderr).toContain(`${path} is not UTF-8 text: line 2 has bytes that UTF-8 does not allow (FC 6C 6C 65).`);
    expect(refused.stderr).toContain('--encoding windows-1252');
    expect(receiptsCount(dbPath)).toBe(0);

    const chosen = await runCliCaptured(['import', '--db', dbPath, '--receipts', path, '--encoding', 'windows-1252', '--json']);
    expect(chosen.code).toBe(0);
    const db = openDatabase(dbPath);
    expect(db.prepare('SELECT category FROM receipts').pluck().get()).toBe('Müller Käse');
    db.close();
  });

  it('a broken UTF-8 sequence deep in a large file names its line', async () => {
    const folder = temporaryFolder();
    const path = writeText(folder, 'late.csv', Buffer.concat([Buffer.from(`customer_id,date,amount,category\n${goodRows(200_000)}`), Buffer.from('LM9,2026-01-05,1.00,fr\xc3(sh\n', 'latin1')]));
    const refused = await runCliCaptured(['import', '--db', join(folder, 'spendmix.db'), '--receipts', path]);
    expect(refused.code).toBe(2);
    expect(refused.stderr).toContain('line 200002 has bytes that UTF-8 does not allow (C3 28 73 68)');
  });

  it('--encoding takes only the two choices', async () => {
    const folder = temporaryFolder();
    const path = writeText(folder, 'a.csv', 'customer_id,date,amount\nLM1,2026-01-05,1.00\n');
    const result = await runCliCaptured(['import', '--db', join(folder, 'spendmix.db'), '--receipts', path, '--encoding', 'latin9']);
    expect(result.code).toBe(2);
    expect(result.stderr).toContain('(encoding, --encoding) must be one of utf-8, windows-1252 (got "latin9")');
  });
});

describe('two columns with one name', () => {
  it('are refused naming the name and both columns, and nothing is imported', async () => {
    const folder = temporaryFolder();
    const dbPath = join(folder, 'spendmix.db');
    const path = writeText(folder, 'dup.csv', 'customer_id,date,Amount,amount \nLM001,2026-01-05,12.50,99\n');
    const result = await runCliCaptured(['import', '--db', dbPath, '--receipts', path]);
    expect(result.code).toBe(2);
    expect(result.stderr).toContain('The file has two columns with the same name: "Amount" (columns 3 and 4).');
    expect(receiptsCount(dbPath)).toBe(0);
  });
});

describe('dates outside a plausible range', () => {
  it('are rejected rows in the report, with the range and how to widen it; a wider range takes them', async () => {
    const folder = temporaryFolder();
    const text = `customer_id,date,amount,category\n${goodRows(97)}LM7001,0001-01-01,1.00,x\nLM7002,1900-01-01,2.00,x\nLM7003,9999-12-31,3.00,x\n`;
    const path = writeText(folder, 'dates.csv', text);
    const result = await runCliCaptured(['import', '--db', join(folder, 'a.db'), '--receipts', path, '--json']);
    expect(result.code).toBe(0);
    const imported = JSON.parse(result.stdout) as { rowsImported: number; rowsRejected: number; report: string };
    expect(imported).toMatchObject({ rowsImported: 97, rowsRejected: 3 });
    const { from, to } = defaultPlausibleDates();
    const reason = `date outside the plausible range ${from} to ${to}; if it is right, widen the range (--plausible-dates FROM..TO)`;
    expect(readFileSync(imported.report, 'utf8').trim().split('\n').slice(1)).toEqual(
      [
        [99, '0001-01-01'],
        [100, '1900-01-01'],
        [101, '9999-12-31'],
      ].map(([line, date]) => `${line},date,${date},"${reason}"`),
    );

    const wide = await runCliCaptured(['import', '--db', join(folder, 'b.db'), '--receipts', path, '--plausible-dates', '0001-01-01..9999-12-31', '--json']);
    expect(JSON.parse(wide.stdout)).toMatchObject({ rowsImported: 100, rowsRejected: 0 });
    const bad = await runCliCaptured(['import', '--db', join(folder, 'c.db'), '--receipts', path, '--plausible-dates', '2026-12-31..2026-01-01']);
    expect(bad.code).toBe(2);
    expect(bad.stderr).toContain('(plausibleDates, --plausible-dates) must not start after it ends');
  });

  it('the default is 1990-01-01 to a year after today, from the API contract (the one place for defaults)', () => {
    const parsed = importFileInput.parse({ path: 'x.csv', kind: 'receipts' });
    expect(parsed.plausibleDates).toEqual(defaultPlausibleDates());
    expect(defaultPlausibleDates(new Date('2026-12-03T10:00:00Z'))).toEqual({ from: '1990-01-01', to: '2027-12-04' });
    expect(parsed.encoding).toBe('utf-8');
  });

  it('applies to the date customers joined too', async () => {
    const folder = temporaryFolder();
    const path = writeText(folder, 'c.csv', `customer_id,joined,marketing_consent\n${Array.from({ length: 40 }, (_, i) => `C${i},2024-03-01,yes\n`).join('')}C99,1899-12-31,yes\n`);
    const result = await runCliCaptured(['import', '--db', join(folder, 'a.db'), '--customers', path, '--json']);
    expect(JSON.parse(result.stdout)).toMatchObject({ rowsImported: 40, rowsRejected: 1 });
  });
});

describe('an amount written with a decimal comma, read with a decimal point', () => {
  it('says it looks like a decimal comma and names the setting', async () => {
    const folder = temporaryFolder();
    const path = writeText(folder, 'comma.csv', `customer_id,date,amount,category\n${goodRows(40)}LM999,2026-01-06,"1.234,56",x\nLM998,2026-01-06,1.234,x\n`);
    const result = await runCliCaptured(['import', '--db', join(folder, 'a.db'), '--receipts', path, '--max-rejected-share', '0.1', '--json']);
    const report = readFileSync((JSON.parse(result.stdout) as { report: string }).report, 'utf8');
    expect(report).toContain('42,amount,"1.234,56","amount looks like it has a decimal comma (as in 1.234,56); choose --decimal-comma for this file"');
    expect(report).toContain('43,amount,1.234,"amount has 3 decimals; if the point groups thousands (1.234 for 1234), choose --decimal-comma for this file"');
  });
});
