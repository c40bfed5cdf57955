import type { Migration } from '../migration-types.js';

/**
 * The data-in tables of DESIGN.md §3. Dates are day numbers (src/store/days.ts), money is integer
 * cents. The unique indexes are the de-duplication keys: a receipt with an id is identified by
 * (receipt_id, category); one without by (customer, day, time, amount, store, category). NULLs are
 * folded to '' inside the keys because SQLite treats NULLs as distinct in unique indexes.
 */
export const coreTables: Migration = {
  version: 1,
  name: 'core-tables',
  up(db) {
    db.exec(`
      CREATE TABLE imports (
        import_id INTEGER PRIMARY KEY,
        file_name TEXT NOT NULL,
        kind TEXT NOT NULL CHECK (kind IN ('receipts', 'visits', 'customers', 'features')),
        content_hash TEXT NOT NULL,
        mapping TEXT NOT NULL,
        rows_read INTEGER NOT NULL,
        rows_imported INTEGER NOT NULL,
        rows_rejected INTEGER NOT NULL,
        duplicates_skipped INTEGER NOT NULL,
        amount_total_cents INTEGER,
        report_path TEXT,
        imported_at TEXT NOT NULL,
        UNIQUE (kind, content_hash)
      );

      CREATE TABLE column_mappings (
        kind TEXT PRIMARY KEY,
        mapping TEXT NOT NULL,
        saved_at TEXT NOT NULL
      );

      CREATE TABLE stores (
        store_id TEXT PRIMARY KEY,
        name TEXT
      );

      CREATE TABLE customers (
        customer_id TEXT PRIMARY KEY,
        joined TEXT,
        marketing_consent INTEGER CHECK (marketing_consent IN (0, 1)),
        home_store TEXT,
        import_id INTEGER REFERENCES imports(import_id)
      );

      CREATE TABLE receipts (
        row_id INTEGER PRIMARY KEY,
        receipt_id TEXT,
        customer_id TEXT NOT NULL,
        day INTEGER NOT NULL,
        time TEXT,
        amount_cents INTEGER NOT NULL,
        store_id TEXT,
        category TEXT,
        items INTEGER,
        import_id INTEGER NOT NULL REFERENCES imports(import_id)
      );
      CREATE UNIQUE INDEX receipts_by_receipt_key
        ON receipts (receipt_id, ifnull(category, ''))
        WHERE receipt_id IS NOT NULL;
      CREATE UNIQUE INDEX receipts_by_natural_key
        ON receipts (customer_id, day, ifnull(time, ''), amount_cents, ifnull(store_id, ''), ifnull(category, ''))
        WHERE receipt_id IS NULL;
      CREATE INDEX receipts_by_customer_day ON receipts (customer_id, day);

      CREATE TABLE visits (
        row_id INTEGER PRIMARY KEY,
        customer_id TEXT NOT NULL,
        day INTEGER NOT NULL,
        time TEXT,
        store_id TEXT,
        channel TEXT,
        import_id INTEGER NOT NULL REFERENCES imports(import_id)
      );
      CREATE UNIQUE INDEX visits_by_natural_key
        ON visits (customer_id, day, ifnull(time, ''), ifnull(store_id, ''), ifnull(channel, ''));

      CREATE TABLE customer_features (
        customer_id TEXT NOT NULL,
        feature TEXT NOT NULL,
        value REAL,
        import_id INTEGER REFERENCES imports(import_id),
        PRIMARY KEY (customer_id, feature)
      );
    `);
  },
};
