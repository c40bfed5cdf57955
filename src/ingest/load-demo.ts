import { readFileSync } from 'node:fs';
import type { Database } from 'better-sqlite3';
import { saveStoreNames } from '../store/stores-repo.js';
import { tokenizeCsv } from './csv-tokenizer.js';
import type { DemoResult, ImportResult } from '../api/contract.js';
import { importFile, type ImportProgress } from './import-file.js';
import type { ImportKind } from '../store/imports-repo.js';

/** Paths of the demo generator's files for the kinds we load (src/demo/output-folder.ts). */
export interface DemoFiles {
  receipts: string;
  visits: string;
  customers: string;
  stores: string;
}

export interface DemoLoadResult {
  imports: ImportResult[];
  stores: number;
}

/**
 * Loads a generated demo folder through the same importer the analyst uses (customers first, so
 * consent is known, then receipts and visits), plus the store names of stores.csv.
 */
export async function loadDemoFiles(
  db: Database,
  files: DemoFiles,
  onProgress?: (kind: ImportKind, progress: ImportProgress) => void,
  signal?: AbortSignal,
): Promise<DemoLoadResult> {
  const imports: ImportResult[] = [];
  for (const kind of ['customers', 'receipts', 'visits'] as const) {
    imports.push(
      await importFile(db, { path: files[kind], kind, signal, onProgress: onProgress && ((progress) => onProgress(kind, progress)) }),
    );
  }
  const [header, ...rows] = tokenizeCsv(readFileSync(files.stores, 'utf8')).map((record) => record.fields);
  const idAt = header.indexOf('store_id');
  const nameAt = header.indexOf('name');
  const stores = saveStoreNames(
    db,
    rows.map((fields) => ({ storeId: fields[idAt], name: fields[nameAt] ?? null })),
  );
  return { imports, stores };
}

/** What a loaded demo database holds: receipts counts distinct receipts, as `demo --out` does. */
export function demoDatabaseSummary(db: Database, path: string): DemoResult {
  const count = (sql: string) => db.prepare(sql).pluck().get() as number;
  return {
    db: path,
    customers: count('SELECT count(*) FROM customers'),
    receipts: count('SELECT count(*) FROM (SELECT DISTINCT receipt_id FROM receipts WHERE receipt_id IS NOT NULL)'),
    visits: count('SELECT count(*) FROM visits'),
    receiptRows: count('SELECT count(*) FROM receipts'),
  };
}
