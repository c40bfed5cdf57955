import type { Database } from 'better-sqlite3';

/**
 * Row counts for the database summary without counting the big tables row by row (a count(*)
 * over 20 M receipts walks a whole index). Receipts and visits are only ever written by the
 * importer, which inserts them with OR IGNORE inside the import's transaction and records the
 * rows it actually added (duplicates skipped are not among them) in the imports row it commits
 * with them; nothing deletes them. So the sums of imports.rows_imported are the table counts, and
 * the rows' ids run 1…N without gaps, so the largest id (one index lookup) must equal the sum. If
 * it does not, rows were added some other way (a hand-built file, as the benchmarks make) and the
 * table is counted instead. (Spendmix never deletes receipts or visits; a deletion below the
 * largest id would go unnoticed here.)
 * Customers are upserted (a re-imported customer counts as written but adds no row), so they
 * are counted; that table has one short row per customer.
 */
export interface DatabaseCounts {
  customers: number;
  receipts: number;
  visits: number;
}

export function databaseCounts(db: Database): DatabaseCounts {
  const imported = db
    .prepare("SELECT kind, sum(rows_imported) AS rows FROM imports WHERE kind IN ('receipts', 'visits') GROUP BY kind")
    .all() as { kind: 'receipts' | 'visits'; rows: number }[];
  const rowsOf = (kind: 'receipts' | 'visits') => {
    const recorded = imported.find((entry) => entry.kind === kind)?.rows ?? 0;
    const largestId = (db.prepare(`SELECT max(row_id) FROM ${kind}`).pluck().get() as number | null) ?? 0;
    return recorded === largestId ? recorded : (db.prepare(`SELECT count(*) FROM ${kind}`).pluck().get() as number);
  };
  return {
    customers: db.prepare('SELECT count(*) FROM customers').pluck().get() as number,
    receipts: rowsOf('receipts'),
    visits: rowsOf('visits'),
  };
}
