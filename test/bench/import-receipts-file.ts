import { closeSync, openSync, writeSync } from 'node:fs';
import { uniformInt } from 'pure-rand/distribution/uniformInt';
import { xoroshiro128plus } from 'pure-rand/generator/xoroshiro128plus';
import { isoDateFromDay, dayFromIsoDate } from '../../src/store/days.js';

/** Invented department names for generated test and benchmark files. */
const CATEGORIES = ['fresh', 'bakery', 'dairy', 'meat', 'frozen', 'pantry', 'drinks', 'household', 'personal_care', 'fish', 'deli', 'baby'];

export interface ReceiptsFileOptions {
  rows: number;
  customers: number;
  seed?: number;
  /** First receipt number, so that two files can overlap or not. */
  firstReceipt?: number;
  firstDay?: string;
  days?: number;
}

/**
 * Writes a receipts CSV of `rows` department rows (1–4 per receipt) for `customers` invented
 * customers over `days` days, seeded, streaming (memory stays flat at any size). Returns the
 * number of rows and the exact sum of the amounts in cents.
 */
export function writeReceiptsFile(path: string, options: ReceiptsFileOptions): { rows: number; amountCents: number } {
  const generator = xoroshiro128plus(options.seed ?? 20260101);
  const draw = (low: number, high: number) => uniformInt(generator, low, high);
  const firstDay = dayFromIsoDate(options.firstDay ?? '2025-01-01');
  const days = options.days ?? 699;
  const descriptor = openSync(path, 'w');
  let pending: string[] = ['receipt_id,customer_id,store_id,date,category,amount\n'];
  let written = 0;
  let amountCents = 0;
  let receipt = options.firstReceipt ?? 1;
  try {
    while (written < options.rows) {
      const day = firstDay + Math.floor((written / options.rows) * days);
      const date = isoDateFromDay(day);
      const customer = `C${String(draw(1, options.customers)).padStart(7, '0')}`;
      const store = `S${String(draw(1, 16)).padStart(2, '0')}`;
      const time = `${String(draw(7, 21)).padStart(2, '0')}:${String(draw(0, 59)).padStart(2, '0')}:00`;
      const departments = Math.min(draw(1, 4), options.rows - written);
      const refund = draw(0, 99) < 3;
      const firstCategory = draw(0, CATEGORIES.length - 1);
      const receiptId = `R${String(receipt).padStart(9, '0')}`;
      for (let department = 0; department < departments; department += 1) {
        const cents = (refund ? -1 : 1) * draw(50, 8000);
        amountCents += cents;
        const sign = cents < 0 ? '-' : '';
        const absolute = Math.abs(cents);
        const category = CATEGORIES[(firstCategory + department) % CATEGORIES.length];
        pending.push(
          `${receiptId},${customer},${store},${date}T${time},${category},${sign}${Math.floor(absolute / 100)}.${String(absolute % 100).padStart(2, '0')}\n`,
        );
        written += 1;
      }
      receipt += 1;
      if (pending.length >= 10_000) {
        writeSync(descriptor, pending.join(''));
        pending = [];
      }
    }
    writeSync(descriptor, pending.join(''));
  } finally {
    closeSync(descriptor);
  }
  return { rows: written, amountCents };
}
