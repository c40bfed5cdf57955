/**
 * Builds (once, then reuses) a database of synthetic receipts for the feature and full-run
 * benchmarks: `customers` customers, `rows` receipt rows in date order over the 12 months up to
 * 2026-11-30, four department rows per receipt, about 1.5% refund receipts. Rows are generated
 * inside SQLite by a recursive query (no CSV), with a multiplicative hash for the spread.
 */
import { existsSync, renameSync, rmSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { openDatabase, type Database } from '../../src/store/database.js';
import { dayFromIsoDate } from '../../src/store/days.js';

export const SYNTHETIC_AS_OF = '2026-11-30';

/** A numeric `--name value` command-line flag of a benchmark, or the fallback. */
export function benchFlag(name: string, fallback: number): number {
  const at = process.argv.indexOf(`--${name}`);
  return at >= 0 ? Number(process.argv[at + 1]) : fallback;
}

export function syntheticReceiptsDatabase(customers: number, rows: number, folder = tmpdir()): { path: string; seconds: number; reused: boolean } {
  const path = join(folder, `spendmix-bench-${customers}c-${rows}r.db`);
  if (existsSync(path)) return { path, seconds: 0, reused: true };
  const building = `${path}.building`;
  rmSync(building, { force: true });
  const started = performance.now();
  const db: Database = openDatabase(building);
  const firstDay = dayFromIsoDate('2025-12-01');
  const days = dayFromIsoDate(SYNTHETIC_AS_OF) - firstDay + 1;
  db.prepare("INSERT INTO imports (import_id, file_name, kind, content_hash, mapping, rows_read, rows_imported, rows_rejected, duplicates_skipped, imported_at) VALUES (1, 'synthetic', 'receipts', 'synthetic', '{}', 0, 0, 0, 0, '2026-12-01')").run();
  // Customer spend levels differ by a factor from the customer's hash so there is structure to find.
  db.exec(`
    WITH RECURSIVE seq(i) AS (SELECT 0 UNION ALL SELECT i + 1 FROM seq WHERE i < ${rows - 1})
    INSERT INTO receipts (receipt_id, customer_id, day, time, amount_cents, store_id, category, items, import_id)
    SELECT 'R' || (i / 4),
           'C' || substr('0000000' || (((i / 4) * 2654435761) % ${customers}), -7),
           ${firstDay} + (i * ${days}) / ${rows},
           '10:00:00',
           CASE WHEN (i / 4) % 67 = 0 THEN -1 ELSE 1 END *
             (100 + ((i * 40503) % 2500) * (1 + (((i / 4) * 2654435761) % ${customers}) % 4)),
           'S' || ((i / 4) % 16),
           CASE i % 4 WHEN 0 THEN 'fresh' WHEN 1 THEN 'pantry' WHEN 2 THEN 'dairy' ELSE 'household' END,
           1 + i % 5,
           1
      FROM seq;
  `);
  db.close();
  renameSync(building, path);
  for (const suffix of ['-wal', '-shm']) rmSync(`${building}${suffix}`, { force: true });
  return { path, seconds: (performance.now() - started) / 1000, reused: false };
}
