import type { Database } from 'better-sqlite3';

export interface StoreRecord {
  storeId: string;
  name: string | null;
}

/** Records store names (new stores added, known ones renamed) in one transaction; returns how many were given. */
export function saveStoreNames(db: Database, stores: readonly StoreRecord[]): number {
  const upsert = db.prepare(
    'INSERT INTO stores (store_id, name) VALUES (?, ?) ON CONFLICT (store_id) DO UPDATE SET name = coalesce(excluded.name, name)',
  );
  db.transaction(() => {
    for (const store of stores) upsert.run(store.storeId, store.name);
  })();
  return stores.length;
}

export function listStores(db: Database): StoreRecord[] {
  return (db.prepare('SELECT store_id, name FROM stores ORDER BY store_id').all() as Array<{ store_id: string; name: string | null }>).map(
    (row) => ({ storeId: row.store_id, name: row.name }),
  );
}
