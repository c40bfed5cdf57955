import { readFileSync, writeFileSync } from 'node:fs';
import { join } from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import type { ApiOutput } from '../../src/api/contract.js';
import { callApi } from '../../src/api/handlers.js';
import { ApiSession } from '../../src/api/session.js';
import { importFile } from '../../src/ingest/import-file.js';
import { demoDatabase, sampleDir, type DemoDatabase } from '../runs/demo-database.js';

/**
 * databaseInfo takes the receipt and visit counts from the importer's own per-file counts
 * instead of counting the tables; they must stay the tables' true counts when later files
 * repeat rows (duplicates skipped) or carry bad rows (rejected). Data: the committed demo sample
 * (invented), then two further files built from it.
 */

let demo: DemoDatabase;
const results: { duplicatesSkipped: number; rowsRejected: number }[] = [];

beforeAll(async () => {
  demo = await demoDatabase('sample', { via: 'importer' });
  const receipts = readFileSync(join(sampleDir, 'receipts.csv'), 'utf8').trim().split('\n');
  // 2,000 receipts lines already imported, 30 new ones (new receipt ids) and one with a bad amount.
  const repeated = receipts.slice(0, 2001);
  const fresh = receipts.slice(1, 31).map((line, i) => line.replace(/^R\d+/, `R9${String(i).padStart(6, '0')}`));
  const bad = receipts[40].replace(/^R\d+/, 'R9999999').replace(/,[^,]*$/, ',lots');
  writeFileSync(join(demo.folder, 'receipts-again.csv'), `${[...repeated, ...fresh, bad].join('\n')}\n`);
  const visits = readFileSync(join(sampleDir, 'visits.csv'), 'utf8').trim().split('\n');
  // 1,000 visits already imported and 12 at a new time of day.
  const freshVisits = visits.slice(1, 13).map((line) => line.replace(/T\d\d:\d\d:\d\d/, 'T23:59:59'));
  writeFileSync(join(demo.folder, 'visits-again.csv'), `${[...visits.slice(0, 1001), ...freshVisits].join('\n')}\n`);
  for (const kind of ['receipts', 'visits'] as const) {
    results.push(await importFile(demo.db, { path: join(demo.folder, `${kind}-again.csv`), kind, options: { reportDir: demo.folder } }));
  }
});
afterAll(() => demo?.close());

describe('databaseInfo counts', () => {
  it('equal the tables\' own counts after files with duplicates and rejected rows', async () => {
    expect(results[0].duplicatesSkipped).toBeGreaterThan(1000);
    expect(results[0].rowsRejected).toBe(1);
    expect(results[1].duplicatesSkipped).toBeGreaterThan(500);
    const session = new ApiSession({ dbPath: demo.path, shell: 'cli' });
    try {
      const info = (await callApi(session, 'databaseInfo', {})) as ApiOutput<'databaseInfo'>;
      const count = (table: string) => demo.db.prepare(`SELECT count(*) FROM ${table}`).pluck().get() as number;
      expect({ customers: info.customers, receipts: info.receipts, visits: info.visits, imports: info.imports }).toEqual({
        customers: count('customers'),
        receipts: count('receipts'),
        visits: count('visits'),
        imports: count('imports'),
      });
      // The importer's counts are what was answered: its rows' ids run without gaps, so the quick path is the one taken.
      for (const kind of ['receipts', 'visits'] as const) {
        const recorded = demo.db.prepare('SELECT sum(rows_imported) FROM imports WHERE kind = ?').pluck().get(kind);
        expect(demo.db.prepare(`SELECT max(row_id) FROM ${kind}`).pluck().get()).toBe(recorded);
        expect(info[kind]).toBe(recorded);
      }
      // The sample's own files plus exactly the new rows of the later ones.
      expect(info.receipts).toBe(74632 + 30);
      expect(info.visits).toBe(32695 + 12);

      // Rows added around the importer (as the benchmarks' hand-built files hold) are still counted right.
      demo.db.prepare('INSERT INTO receipts (receipt_id, customer_id, day, amount_cents, import_id) VALUES (?, ?, ?, ?, 1)').run('R-outside', 'C00001', 20400, 1234);
      demo.db.prepare('INSERT INTO visits (customer_id, day, import_id) VALUES (?, ?, 1)').run('C00001', 20401);
      const later = (await callApi(session, 'databaseInfo', {})) as ApiOutput<'databaseInfo'>;
      expect({ receipts: later.receipts, visits: later.visits }).toEqual({ receipts: count('receipts'), visits: count('visits') });
      expect(later.receipts).toBe(info.receipts + 1);
      expect(later.visits).toBe(info.visits + 1);
    } finally {
      await session.close();
    }
  });
});
