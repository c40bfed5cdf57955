import { join } from 'node:path';
import { describe, expect, it } from 'vitest';
import { openDatabase } from '../../src/store/database.js';
import { listStores } from '../../src/store/stores-repo.js';
import { temporaryFolder, runCliCaptured } from './support.js';

const cli = runCliCaptured;

describe('demo --db (DESIGN.md §10)', () => {
  it('loads the generated files through the importer; the counts match what was generated; running again changes nothing', async () => {
    const folder = temporaryFolder();
    const db = join(folder, 'demo.db');
    const out = join(folder, 'files');
    const generated = await cli(['demo', '--out', out, '--customers', '150', '--json']);
    expect(generated.code).toBe(0);
    const files = JSON.parse(generated.stdout) as { customers: number; receipts: number; visits: number };

    const loaded = await cli(['demo', '--db', db, '--customers', '150', '--json']);
    expect(loaded.code, loaded.stderr).toBe(0);
    const result = JSON.parse(loaded.stdout);
    expect(Object.keys(result)).toEqual(['db', 'customers', 'receipts', 'visits']);
    expect(result).toEqual({ db, customers: files.customers, receipts: files.receipts, visits: files.visits });

    const again = await cli(['demo', '--db', db, '--customers', '150', '--json']);
    expect(JSON.parse(again.stdout)).toEqual(result);
    const check = openDatabase(db, { readonly: true });
    expect(check.prepare('SELECT count(*) FROM imports').pluck().get()).toBe(3);
    expect(listStores(check).every((store) => store.name !== null)).toBe(true);
    check.close();
  });
});
