import { mkdtempSync, rmSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { defaultFreshCategories } from '../../src/api/contract.js';
import { checkAsOfInData, computeReceiptFeatures } from '../../src/features/compute.js';
import { featureWindow, subtractMonths } from '../../src/features/window.js';
import { isInputError } from '../../src/errors.js';
import { openDatabase, type Database } from '../../src/store/database.js';
import { dayFromIsoDate, isoDateFromDay } from '../../src/store/days.js';

/**
 * Features worked by hand from a few invented receipts (DESIGN.md §4 definitions, written out in
 * src/features/definitions.ts). As-of 2026-11-30, 12-month window: 2025-12-01 … 2026-11-30 (365
 * days); last 3 months from 2026-09-01, the 3 before from 2026-06-01.
 */
let folder: string;
let db: Database;

beforeAll(() => {
  folder = mkdtempSync(join(tmpdir(), 'spendmix-features-'));
  db = openDatabase(join(folder, 'features.db'));
  db.prepare("INSERT INTO imports (import_id, file_name, kind, content_hash, mapping, rows_read, rows_imported, rows_rejected, duplicates_skipped, imported_at) VALUES (1, 't', 'receipts', 'h', '{}', 0, 0, 0, 0, 'now')").run();
  db.prepare("INSERT INTO customers (customer_id, joined, marketing_consent) VALUES ('A', '2025-06-10', 1)").run();
  const receipt = db.prepare('INSERT INTO receipts (receipt_id, customer_id, day, time, amount_cents, store_id, category, import_id) VALUES (?, ?, ?, ?, ?, ?, ?, 1)');
  const day = dayFromIsoDate;
  // Customer A
  receipt.run('R0', 'A', day('2025-11-20'), '10:00:00', 5000, 'S1', 'pantry'); // before the window
  receipt.run('R1', 'A', day('2026-01-10'), '10:00:00', 2000, 'S1', 'fresh');
  receipt.run('R1', 'A', day('2026-01-10'), '10:00:00', 1000, 'S1', 'pantry'); // same receipt, second department
  receipt.run('R2', 'A', day('2026-07-15'), '11:00:00', 1500, 'S1', 'fresh');
  receipt.run('R3', 'A', day('2026-10-05'), '12:00:00', 4000, 'S1', 'dairy');
  receipt.run('R4', 'A', day('2026-10-20'), '12:00:00', -500, 'S1', 'pantry'); // refund receipt
  // Customer B: a receipt without id split over two departments, then one with an id.
  receipt.run(null, 'B', day('2026-11-01'), '09:00:00', 1200, 'S1', 'bakery');
  receipt.run(null, 'B', day('2026-11-01'), '09:00:00', 800, 'S1', 'dairy');
  receipt.run('R9', 'B', day('2026-11-20'), '09:30:00', 3000, 'S2', 'fresh');
  // Customer C: only before the window (lapsed).
  receipt.run('R8', 'C', day('2025-10-01'), '09:30:00', 3000, 'S2', 'fresh');
  const visit = db.prepare("INSERT INTO visits (customer_id, day, time, store_id, channel, import_id) VALUES ('A', ?, '10:00:00', 'S1', 'store', 1)");
  for (const date of ['2026-01-10', '2026-07-15', '2026-10-05', '2026-10-20', '2026-11-02']) visit.run(day(date));
});

afterAll(() => {
  db.close();
  rmSync(folder, { recursive: true, force: true });
});

function featuresOf(customerId: string): Record<string, number> | null {
  const table = computeReceiptFeatures(db, { asOf: '2026-11-30', windowMonths: 12, minPurchases: 2, minTenureMonths: 2, freshCategories: defaultFreshCategories });
  const i = table.customerIds.indexOf(customerId);
  if (i < 0) return null;
  return { ...Object.fromEntries(table.names.map((name, j) => [name, table.columns[j][i]])), revenueCents: table.revenueCents[i], tooNew: table.tooNew[i] };
}

describe('window arithmetic', () => {
  it('subtracts calendar months and clamps the day of month', () => {
    expect(isoDateFromDay(subtractMonths('2026-03-31', 1))).toBe('2026-02-28');
    expect(isoDateFromDay(subtractMonths('2024-03-31', 1))).toBe('2024-02-29');
    expect(isoDateFromDay(subtractMonths('2026-01-15', 13))).toBe('2024-12-15');
    // A month's last day maps to the last day: month-end windows cover whole months.
    expect(isoDateFromDay(subtractMonths('2026-11-30', 3))).toBe('2026-08-31');
    expect(isoDateFromDay(subtractMonths('2026-02-28', 1))).toBe('2026-01-31');
    const window = featureWindow('2026-11-30', 12);
    expect(isoDateFromDay(window.startDay)).toBe('2025-12-01');
    expect(isoDateFromDay(window.last3StartDay)).toBe('2026-09-01');
    expect(isoDateFromDay(window.prev3StartDay)).toBe('2026-06-01');
  });
});

describe('features worked by hand', () => {
  it('customer A: a full window with a refund, departments and visits without purchase', () => {
    const a = featuresOf('A')!;
    // Net spend in the window 20 + 10 + 15 + 40 − 5 = 80 EUR; first day is the join date (before the
    // window), so all 12 months are observed: 80 / 12.
    expect(a.spend_per_month).toBeCloseTo(80 / 12, 12);
    expect(a.revenueCents).toBe(8000);
    // Purchases: R1, R2, R3 (R4 is a refund, R0 before the window) = 3; basket 80 / 3.
    expect(a.purchases).toBe(3);
    expect(a.average_basket).toBeCloseTo(80 / 3, 12);
    // Visits in the window: 5 from the visits table (one without a purchase) → 5 / 12.
    expect(a.visits_per_month).toBeCloseTo(5 / 12, 12);
    // Last visit 2026-11-02 → 28 days before 2026-11-30.
    expect(a.days_since_last_visit).toBe(28);
    // Usual gap between A's visits: 30.4375 / (5 / 12) = 73.05 days. The window's shopping clock:
    // 8 receipt rows with a time (two at 09:00, one at 09:30, two at 10:00, one at 11:00, two at
    // 12:00; a receipt split by department counts per row), 3 of them before 10:00, so at A's last
    // visit (10:00) 3/8 of the shopping day has passed: 29 − 3/8 days to the end of the as-of day.
    expect(a.gaps_since_last_visit).toBeCloseTo(((29 - 3 / 8) * 5) / 12 / 30.4375, 12);
    // Tenure: 2025-06-10 … 2026-11-30 inclusive is 539 days; / (365.25 / 12).
    expect(a.tenure_months).toBeCloseTo(539 / 30.4375, 12);
    // Fresh departments by default include dairy: 20 + 15 + 40 = 75 of 85 bought; refunds 5 of 85.
    expect(a.fresh_share).toBeCloseTo(75 / 85, 12);
    expect(a.refund_share).toBeCloseTo(5 / 85, 12);
    // Trend: last 3 months 40 − 5 = 35, the 3 before 15 → (35 − 15) / (35 + 15) = 0.4.
    expect(a.spend_trend).toBeCloseTo(0.4, 12);
    expect(a.tooNew).toBe(0);
  });

  it('customer B: one receipt without id over two departments counts once; too new by tenure', () => {
    const b = featuresOf('B')!;
    // First day 2026-11-01: 30 observed days of the window's 365 → 0.986 months, floored at 1.
    expect(b.purchases).toBe(2);
    expect(b.spend_per_month).toBeCloseTo(50, 12);
    expect(b.average_basket).toBeCloseTo(25, 12);
    // B has no visit rows although the visits table has some: its purchases are its visits.
    expect(b.visits_per_month).toBeCloseTo(2, 12);
    expect(b.days_since_last_visit).toBe(10);
    // Two visits in one observed month: a usual gap of 15.2 days; 2 of the window's 8 timed
    // receipt rows come before 09:30, so from B's last visit to the end of the as-of day is 11 − 2/8
    // days on the shopping clock, 0.706 of one.
    expect(b.gaps_since_last_visit).toBeCloseTo(((11 - 2 / 8) * 2) / 30.4375, 12);
    expect(b.tenure_months).toBeCloseTo(30 / 30.4375, 12);
    // Bakery, dairy and fresh are all fresh departments by default.
    expect(b.fresh_share).toBe(1);
    expect(b.spend_trend).toBe(1);
    expect(b.refund_share).toBe(0);
    expect(b.tooNew).toBe(1);
  });

  it('customer C, with receipts only before the window, is not part of it', () => {
    expect(featuresOf('C')).toBeNull();
  });

  it('the fresh departments are settable', () => {
    const table = computeReceiptFeatures(db, { asOf: '2026-11-30', windowMonths: 12, minPurchases: 2, minTenureMonths: 2, freshCategories: ['Fresh'] });
    const fresh = table.columns[table.names.indexOf('fresh_share')];
    // A: 20 + 15 of 85; B: 30 of 50 ("Fresh" matches the lower-case department too).
    expect(fresh[0]).toBeCloseTo(35 / 85, 12);
    expect(fresh[1]).toBeCloseTo(30 / 50, 12);
  });

  it('the too-new thresholds are settable', () => {
    const table = computeReceiptFeatures(db, { asOf: '2026-11-30', windowMonths: 12, minPurchases: 4, minTenureMonths: 0, freshCategories: defaultFreshCategories });
    // A has 3 purchases (< 4), B has 2: both too new now.
    expect(Array.from(table.tooNew)).toEqual([1, 1]);
  });

  it('refuses an as-of date outside the data, naming the range', () => {
    try {
      checkAsOfInData(db, featureWindow('2027-01-31', 12));
      expect.unreachable();
    } catch (error) {
      expect(isInputError(error)).toBe(true);
      expect((error as Error).message).toContain('from 2025-10-01 to 2026-11-20');
    }
  });
});

describe('a window shorter than the trend months, with history before it', () => {
  /**
   * Worked by hand: as of 2026-11-30 a 2-month window is 2026-10-01 … 2026-11-30 (61 days), so the
   * trend's "last 3" and "3 before" both start at the window start. Customer D has no join date
   * and no visits; the receipt of 2026-07-01 lies before the window (it counts for tenure only).
   */
  let shortFolder: string;
  let shortDb: Database;
  beforeAll(() => {
    shortFolder = mkdtempSync(join(tmpdir(), 'spendmix-features-short-'));
    shortDb = openDatabase(join(shortFolder, 'features.db'));
    shortDb.prepare("INSERT INTO imports (import_id, file_name, kind, content_hash, mapping, rows_read, rows_imported, rows_rejected, duplicates_skipped, imported_at) VALUES (1, 't', 'receipts', 'h', '{}', 0, 0, 0, 0, 'now')").run();
    const receipt = shortDb.prepare('INSERT INTO receipts (receipt_id, customer_id, day, time, amount_cents, store_id, category, import_id) VALUES (?, ?, ?, ?, ?, ?, ?, 1)');
    receipt.run('D1', 'D', dayFromIsoDate('2026-07-01'), '10:00:00', 3000, 'S1', 'pantry');
    receipt.run('D2', 'D', dayFromIsoDate('2026-10-15'), '10:00:00', 2000, 'S1', 'fresh');
    receipt.run('D3', 'D', dayFromIsoDate('2026-11-10'), '10:00:00', 1000, 'S1', 'pantry');
  });
  afterAll(() => {
    shortDb.close();
    rmSync(shortFolder, { recursive: true, force: true });
  });

  it('keeps the sums inside the window and takes tenure from the first receipt before it', () => {
    const table = computeReceiptFeatures(shortDb, { asOf: '2026-11-30', windowMonths: 2, minPurchases: 2, minTenureMonths: 2, freshCategories: defaultFreshCategories });
    expect(table.customerIds).toEqual(['D']);
    const d = Object.fromEntries(table.names.map((name, j) => [name, table.columns[j][0]]));
    // In the window: 20 + 10 = 30 EUR over the whole 2 months (the first day is before the window).
    expect(table.revenueCents[0]).toBe(3000);
    expect(d.spend_per_month).toBeCloseTo(15, 12);
    expect(d.purchases).toBe(2);
    expect(d.average_basket).toBeCloseTo(15, 12);
    // No visits file: purchases are the visits, 2 over 2 months.
    expect(d.visits_per_month).toBeCloseTo(1, 12);
    expect(d.days_since_last_visit).toBe(20);
    // 2026-07-01 … 2026-11-30 inclusive is 153 days.
    expect(d.tenure_months).toBeCloseTo(153 / 30.4375, 12);
    expect(d.fresh_share).toBeCloseTo(20 / 30, 12);
    // The July receipt is before the window, so it is not in "the 3 before": all spend is recent.
    expect(d.spend_trend).toBe(1);
    expect(d.refund_share).toBe(0);
    expect(table.tooNew[0]).toBe(0);
    // The window's receipts with a time are both at 10:00, so on the shopping clock none of the day
    // has passed at 10:00:00 (a minute's receipts count as spread over it): from 2026-11-10 10:00
    // to the end of 2026-11-30 is 21 days, at 1 visit a month.
    expect(d.gaps_since_last_visit).toBeCloseTo(21 / 30.4375, 12);
  });

  it('counts a last visit without a clock time, or at 00:00:00 (how a date-only column reads), as at midday on the shopping clock', () => {
    const gaps = () => {
      const table = computeReceiptFeatures(shortDb, { asOf: '2026-11-30', windowMonths: 2, minPurchases: 2, minTenureMonths: 2, freshCategories: defaultFreshCategories });
      return table.columns[table.names.indexOf('gaps_since_last_visit')][0];
    };
    const setTime = shortDb.prepare("UPDATE receipts SET time = ? WHERE receipt_id = 'D3'");
    try {
      for (const time of [null, '00:00:00']) {
        setTime.run(time);
        // The clock is then the one receipt at 10:00 (a row without a time is not on it); midday
        // is after all of the shopping day: 20 days to the end of the as-of day.
        expect(gaps()).toBeCloseTo(20 / 30.4375, 12);
      }
      // No receipt of the window with a time: the wall clock, midday half a day gone.
      shortDb.prepare("UPDATE receipts SET time = NULL WHERE receipt_id = 'D2'").run();
      setTime.run(null);
      expect(gaps()).toBeCloseTo(20.5 / 30.4375, 12);
      shortDb.prepare("UPDATE receipts SET time = '10:00:00' WHERE receipt_id = 'D2'").run();
      // Receipts at 10:00 and 23:59: half a minute into the last minute, 1.5 of the 2 are made.
      setTime.run('23:59:30');
      expect(gaps()).toBeCloseTo((21 - 1.5 / 2) / 30.4375, 12);
      // Two purchases on the last day, at 09:00 and without a time: the later moment (midday) counts,
      // after both timed receipts, at 3 visits in the 2 months.
      setTime.run('09:00:00');
      shortDb.prepare("INSERT INTO receipts (receipt_id, customer_id, day, time, amount_cents, store_id, category, import_id) VALUES ('D4', 'D', ?, NULL, 500, 'S1', 'pantry', 1)").run(dayFromIsoDate('2026-11-10'));
      expect(gaps()).toBeCloseTo((20 * 1.5) / 30.4375, 12);
    } finally {
      shortDb.prepare("DELETE FROM receipts WHERE receipt_id = 'D4'").run();
      shortDb.prepare("UPDATE receipts SET time = '10:00:00' WHERE receipt_id = 'D2'").run();
      setTime.run('10:00:00');
    }
  });
});
