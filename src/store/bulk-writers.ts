import type { Database, Statement } from 'better-sqlite3';

type Value = string | number | null;

/**
 * Writes the accepted rows of one import, in batches of multi-row statements (one prepared
 * statement call per batch instead of per row is what makes the import fast). `rowsWritten`
 * counts input rows that changed the database; the rest of what was added are duplicates.
 */
export interface BulkWriter {
  /** Adds the rows laid end to end in `values`, `stride` values each (the writer reads its columns from the start of each). */
  addRows(values: readonly Value[], stride: number): void;
  /** Writes what is buffered; call before reading the counters. */
  flush(): void;
  readonly rowsAdded: number;
  readonly rowsWritten: number;
}

const BATCH_ROWS = 128;

/**
 * A writer for a table whose rows are fixed-width tuples. Rows written are counted from the
 * statement's `changes` (a duplicate skipped by OR IGNORE, or a no-op upsert, changes nothing).
 * RETURNING would say which rows, but costs about as much as the insert itself (measured).
 */
function tupleWriter(db: Database, width: number, sqlForRows: (rows: number) => string): BulkWriter {
  const statements = new Map<number, Statement>();
  const statementFor = (rows: number): Statement => {
    let statement = statements.get(rows);
    if (!statement) {
      statement = db.prepare(sqlForRows(rows));
      statements.set(rows, statement);
    }
    return statement;
  };
  const buffer: Value[] = [];
  let buffered = 0;
  let rowsAdded = 0;
  let rowsWritten = 0;
  const writeBuffered = (): void => {
    if (buffered === 0) return;
    rowsWritten += statementFor(buffered).run(buffer).changes;
    buffer.length = 0;
    buffered = 0;
  };
  return {
    addRows(values, stride) {
      for (let offset = 0; offset < values.length; offset += stride) {
        for (let index = offset; index < offset + width; index += 1) buffer.push(values[index]);
        buffered += 1;
        rowsAdded += 1;
        if (buffered === BATCH_ROWS) writeBuffered();
      }
    },
    flush: writeBuffered,
    get rowsAdded() {
      return rowsAdded;
    },
    get rowsWritten() {
      return rowsWritten;
    },
  };
}

function placeholders(rows: number, tuple: string): string {
  return Array.from({ length: rows }, () => tuple).join(',');
}

function checkImportId(importId: number): number {
  if (!Number.isSafeInteger(importId) || importId <= 0) throw new Error(`Bad import id ${importId}`);
  return importId;
}

/**
 * Receipts [receipt_id, customer_id, day, time, amount_cents, store_id, category, items];
 * duplicates by the unique keys. Without `withItems` the items column is not bound at all (one
 * parameter fewer per row is measurably faster; it stays NULL).
 */
export function receiptWriter(db: Database, importId: number, withItems = true): BulkWriter {
  const id = checkImportId(importId);
  const columns = `receipt_id, customer_id, day, time, amount_cents, store_id, category${withItems ? ', items' : ''}`;
  const tuple = `(?,?,?,?,?,?,?${withItems ? ',?' : ''},${id})`;
  return tupleWriter(
    db,
    withItems ? 8 : 7,
    (rows) => `INSERT OR IGNORE INTO receipts (${columns}, import_id) VALUES ${placeholders(rows, tuple)}`,
  );
}

/** Visits [customer_id, day, time, store_id, channel]; duplicates by the natural key. */
export function visitWriter(db: Database, importId: number): BulkWriter {
  const id = checkImportId(importId);
  return tupleWriter(
    db,
    5,
    (rows) =>
      `INSERT OR IGNORE INTO visits (customer_id, day, time, store_id, channel, import_id)
       VALUES ${placeholders(rows, `(?,?,?,?,?,${id})`)}`,
  );
}

/**
 * Customers [customer_id, joined, marketing_consent, home_store]: later files update earlier
 * values (e.g. a consent change); an empty cell keeps what was known. A row that changes nothing
 * counts as a duplicate.
 */
export function customerWriter(db: Database, importId: number): BulkWriter {
  const id = checkImportId(importId);
  return tupleWriter(
    db,
    4,
    (rows) =>
      `INSERT INTO customers (customer_id, joined, marketing_consent, home_store, import_id)
       VALUES ${placeholders(rows, `(?,?,?,?,${id})`)}
       ON CONFLICT (customer_id) DO UPDATE SET
         joined = coalesce(excluded.joined, joined),
         marketing_consent = coalesce(excluded.marketing_consent, marketing_consent),
         home_store = coalesce(excluded.home_store, home_store),
         import_id = excluded.import_id
       WHERE coalesce(excluded.joined, joined) IS NOT joined
          OR coalesce(excluded.marketing_consent, marketing_consent) IS NOT marketing_consent
          OR coalesce(excluded.home_store, home_store) IS NOT home_store
      `,
  );
}

/** Feature rows [customer_id, value…] in the order of `featureNames`; a row counts if any value changed. */
export function featureWriter(db: Database, importId: number, featureNames: readonly string[]): BulkWriter {
  const id = checkImportId(importId);
  const upsert = db.prepare(
    `INSERT INTO customer_features (customer_id, feature, value, import_id) VALUES (?, ?, ?, ${id})
     ON CONFLICT (customer_id, feature) DO UPDATE SET value = excluded.value, import_id = excluded.import_id
     WHERE value IS NOT excluded.value`,
  );
  let rowsAdded = 0;
  let rowsWritten = 0;
  return {
    addRows(values, stride) {
      for (let offset = 0; offset < values.length; offset += stride) {
        rowsAdded += 1;
        let changed = 0;
        for (let index = 0; index < featureNames.length; index += 1) {
          changed += upsert.run(values[offset], featureNames[index], values[offset + index + 1]).changes;
        }
        if (changed > 0) rowsWritten += 1;
      }
    },
    flush() {},
    get rowsAdded() {
      return rowsAdded;
    },
    get rowsWritten() {
      return rowsWritten;
    },
  };
}

/** Store ids seen in the data but not yet in `stores` are recorded (name unknown). Returns how many were new. */
export function recordStoreIds(db: Database, storeIds: Iterable<string>): number {
  const insert = db.prepare('INSERT OR IGNORE INTO stores (store_id, name) VALUES (?, NULL)');
  let added = 0;
  for (const storeId of storeIds) added += insert.run(storeId).changes;
  return added;
}

export function knownStoreIds(db: Database): Set<string> {
  return new Set((db.prepare('SELECT store_id FROM stores').pluck().all() as string[]));
}
