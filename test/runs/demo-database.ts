/**
 * Test support: a database holding a generated Larkmoor Fresh Markets chain (invented demo data).
 * `via: 'importer'` loads the files through the product's importFile; `via: 'direct'` inserts the
 * generator's known-clean rows with prepared statements, several times faster, for the tests that
 * need thousands of customers (the importer itself is tested in test/ingest).
 */
import { mkdtempSync, readFileSync, rmSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { generateDemoChain } from '../../src/demo/index.js';
import { importFile } from '../../src/ingest/import-file.js';
import { openDatabase, type Database } from '../../src/store/database.js';
import { dayFromIsoDate } from '../../src/store/days.js';

export interface DemoDatabase {
  db: Database;
  path: string;
  folder: string;
  dataDir: string;
  /** Latent profile per customer from truth.csv. */
  truth: Map<string, string>;
  close: () => void;
}

export const sampleDir = new URL('../../demo-data/sample/', import.meta.url).pathname;

function csvRows(path: string): string[][] {
  // The generator's files hold no quoted fields, so a split is an exact reading of them.
  return readFileSync(path, 'utf8').trim().split(/\r?\n/).slice(1).map((line) => line.split(','));
}

function loadDirect(db: Database, dataDir: string): void {
  db.transaction(() => {
    db.prepare(
      "INSERT INTO imports (import_id, file_name, kind, content_hash, mapping, rows_read, rows_imported, rows_rejected, duplicates_skipped, imported_at) VALUES (1, 'demo', 'receipts', 'demo-test', '{}', 0, 0, 0, 0, '2026-12-01')",
    ).run();
    const customer = db.prepare('INSERT INTO customers (customer_id, joined, marketing_consent, home_store, import_id) VALUES (?, ?, ?, ?, 1)');
    for (const [id, joined, consent, home] of csvRows(join(dataDir, 'customers.csv'))) customer.run(id, joined || null, consent === 'yes' ? 1 : consent === 'no' ? 0 : null, home || null);
    const receipt = db.prepare(
      'INSERT INTO receipts (receipt_id, customer_id, day, time, amount_cents, store_id, category, import_id) VALUES (?, ?, ?, ?, ?, ?, ?, 1)',
    );
    for (const [receiptId, customerId, storeId, date, category, amount] of csvRows(join(dataDir, 'receipts.csv'))) {
      receipt.run(receiptId, customerId, dayFromIsoDate(date.slice(0, 10)), date.slice(11) || null, Math.round(Number(amount) * 100), storeId, category);
    }
    const visit = db.prepare('INSERT OR IGNORE INTO visits (customer_id, day, time, store_id, channel, import_id) VALUES (?, ?, ?, ?, ?, 1)');
    for (const [customerId, date, storeId, channel] of csvRows(join(dataDir, 'visits.csv'))) {
      visit.run(customerId, dayFromIsoDate(date.slice(0, 10)), date.slice(11) || null, storeId, channel);
    }
  })();
}

export function readTruth(dataDir: string): Map<string, string> {
  return new Map(csvRows(join(dataDir, 'truth.csv')).map(([id, profile]) => [id, profile]));
}

/** A database of `customers` generated customers (or the committed sample when customers is 'sample'). */
export async function demoDatabase(customers: number | 'sample', options: { seed?: number; via?: 'importer' | 'direct' } = {}): Promise<DemoDatabase> {
  const folder = mkdtempSync(join(tmpdir(), 'spendmix-runs-'));
  let dataDir = sampleDir;
  if (customers !== 'sample') {
    dataDir = join(folder, 'data');
    await generateDemoChain({ outDir: dataDir, customers, seed: options.seed ?? 2026 });
  }
  const path = join(folder, 'demo.db');
  const db = openDatabase(path);
  if ((options.via ?? 'direct') === 'direct') loadDirect(db, dataDir);
  else {
    for (const kind of ['customers', 'receipts', 'visits'] as const) {
      await importFile(db, { path: join(dataDir, `${kind}.csv`), kind, options: { reportDir: folder } });
    }
  }
  return {
    db,
    path,
    folder,
    dataDir,
    truth: readTruth(dataDir),
    close: () => {
      db.close();
      rmSync(folder, { recursive: true, force: true });
    },
  };
}
