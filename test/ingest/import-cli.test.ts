import { join } from 'node:path';
import { describe, expect, it } from 'vitest';
import { temporaryFolder, writeText, runCliCaptured } from './support.js';

const cli = runCliCaptured;

describe('spendmix import (DESIGN.md §10)', () => {
  it('prints exactly the contract JSON and recognises a re-import', async () => {
    const folder = temporaryFolder();
    const db = join(folder, 'cli.db');
    const file = writeText(folder, 'r.csv', 'Card,Date,Paid\nC1,2025-01-01,1.50\nC1,2025-01-02,oops\n');
    const first = await cli(['import', '--db', db, '--receipts', file, '--map', 'Card=customer_id', '--map', 'Paid=amount', '--max-rejected-share', '0.5', '--json']);
    expect(first.code).toBe(0);
    const result = JSON.parse(first.stdout);
    expect(Object.keys(result)).toEqual(['file', 'kind', 'rowsRead', 'rowsImported', 'rowsRejected', 'duplicatesSkipped', 'alreadyImported', 'amountTotal', 'report']);
    expect(result).toMatchObject({ file, kind: 'receipts', rowsRead: 2, rowsImported: 1, rowsRejected: 1, amountTotal: 1.5, alreadyImported: false });
    expect(result.report).toMatch(/cli\.db\.import-.*\.report\.csv$/);
    const again = await cli(['import', '--db', db, '--receipts', file, '--json']);
    expect(JSON.parse(again.stdout)).toMatchObject({ alreadyImported: true });
    const human = await cli(['import', '--db', db, '--receipts', file]);
    expect(human.stdout).toMatch(/imported before/);
  });

  it('bad input exits 2 with a clear message', async () => {
    const folder = temporaryFolder();
    const db = join(folder, 'cli.db');
    const file = writeText(folder, 'r.csv', 'customer_id,date,amount\nC1,03/01/2025,1.50\n');
    const cases: Array<[string[], RegExp]> = [
      [['import', '--receipts', file], /needs --db/],
      [['import', '--db', db], /needs one file/],
      [['import', '--db', db, '--receipts', file, '--visits', file], /one file at a time/],
      [['import', '--db', db, '--receipts', file, '--date-format', 'guess'], /\(dateOrder, --date-format\) must be one of iso, day-first, month-first \(got "guess"\)/],
      [['import', '--db', db, '--receipts', file, '--map', 'nonsense'], /COLUMN=FIELD/],
      [['import', '--db', db, '--receipts', file, '--max-rejected-share', '7'], /\(rejectionThreshold, --max-rejected-share\) must be at most 1 \(got 7\)/],
      [['import', '--db', db, '--receipts', file], /date is not ISO.*--date-format/],
      [['import', '--db', db, '--receipts', join(folder, 'absent.csv')], /File .*absent\.csv does not exist/],
    ];
    for (const [args, pattern] of cases) {
      const run = await cli(args);
      expect(run.code, args.join(' ')).toBe(2);
      expect(run.stderr, args.join(' ')).toMatch(pattern);
    }
    const ok = await cli(['import', '--db', db, '--receipts', file, '--date-format', 'day-first', '--json']);
    expect(ok.code).toBe(0);
  });
});
