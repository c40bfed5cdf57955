import BetterSqlite3 from 'better-sqlite3';
import { existsSync, mkdtempSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { describe, expect, it } from 'vitest';
import { InputError } from '../../src/errors.js';
import { CURRENT_SCHEMA_VERSION, openDatabase, schemaVersion, type Database } from '../../src/store/database.js';
import { migrations } from '../../src/store/migrations.js';

function folder(): string {
  return mkdtempSync(join(tmpdir(), 'spendmix-migrations-'));
}

/** Puts a few rows in every core table (those of version 1, which every later version keeps). */
function seedCoreTables(db: Database): void {
  db.exec(`
    INSERT INTO imports (import_id, file_name, kind, content_hash, mapping, rows_read, rows_imported, rows_rejected,
      duplicates_skipped, amount_total_cents, report_path, imported_at)
      VALUES (1, 'jan.csv', 'receipts', 'abc', '{"amount":"amount"}', 2, 2, 0, 0, 1250, NULL, '2026-01-31T10:00:00Z');
    INSERT INTO column_mappings VALUES ('receipts', '{"Paid":"amount"}', '2026-01-31T10:00:00Z');
    INSERT INTO stores VALUES ('S01', 'Market Square');
    INSERT INTO customers VALUES ('C1', '2024-05-01', 1, 'S01', 1), ('C2', NULL, NULL, NULL, 1);
    INSERT INTO receipts (receipt_id, customer_id, day, time, amount_cents, store_id, category, items, import_id)
      VALUES ('R1', 'C1', 20100, '10:00:00', 1000, 'S01', 'fresh', 3, 1), (NULL, 'C2', 20101, NULL, 250, NULL, NULL, NULL, 1);
    INSERT INTO visits (customer_id, day, time, store_id, channel, import_id) VALUES ('C1', 20100, '10:00:00', 'S01', 'store', 1);
    INSERT INTO customer_features VALUES ('C1', 'spend', 12.5, 1);
  `);
}

/** Every row of every table, so "data intact" can be compared whole. */
function dumpTables(db: Database): Record<string, string[]> {
  const tables = db
    .prepare("SELECT name FROM sqlite_master WHERE type = 'table' AND name NOT LIKE 'sqlite_%' ORDER BY name")
    .pluck()
    .all() as string[];
  // Sorted in JS: some tables are WITHOUT ROWID.
  const sorted = (rows: unknown[]) => rows.map((row) => JSON.stringify(row)).sort();
  return Object.fromEntries(tables.map((table) => [table, sorted(db.prepare(`SELECT * FROM "${table}"`).all())]));
}

describe('schema migrations (DESIGN.md §12)', () => {
  it('the list is numbered 1, 2, … in order, and a new database is at the current version', () => {
    expect(migrations.map((migration) => migration.version)).toEqual(migrations.map((_, index) => index + 1));
    const db = openDatabase(join(folder(), 'new.db'));
    expect(schemaVersion(db)).toBe(CURRENT_SCHEMA_VERSION);
    expect(db.pragma('journal_mode', { simple: true })).toBe('wal');
    expect(db.pragma('foreign_keys', { simple: true })).toBe(1);
    db.close();
  });

  for (let from = 1; from < CURRENT_SCHEMA_VERSION || from === 1; from += 1) {
    it(`a database at version ${from} migrates to ${CURRENT_SCHEMA_VERSION} with its data intact and a backup kept`, () => {
      const path = join(folder(), 'old.db');
      const old = openDatabase(path, { targetVersion: from });
      expect(schemaVersion(old)).toBe(from);
      seedCoreTables(old);
      const before = dumpTables(old);
      old.close();

      const db = openDatabase(path);
      expect(schemaVersion(db)).toBe(CURRENT_SCHEMA_VERSION);
      const after = dumpTables(db);
      for (const [table, rows] of Object.entries(before)) expect(after[table], table).toEqual(rows);
      expect(db.pragma('integrity_check', { simple: true })).toBe('ok');
      db.close();

      if (from < CURRENT_SCHEMA_VERSION) {
        const backupPath = `${path}.backup-v${from}`;
        expect(existsSync(backupPath)).toBe(true);
        const backup = new BetterSqlite3(backupPath, { readonly: true });
        expect(backup.pragma('user_version', { simple: true })).toBe(from);
        expect(dumpTables(backup)).toEqual(before);
        backup.close();
      }
    });
  }

  it('a database from a newer Spendmix is refused with a clear message, untouched', () => {
    const path = join(folder(), 'newer.db');
    const raw = new BetterSqlite3(path);
    raw.pragma(`user_version = ${CURRENT_SCHEMA_VERSION + 3}`);
    raw.exec('CREATE TABLE future (x)');
    raw.close();
    expect(() => openDatabase(path)).toThrow(InputError);
    expect(() => openDatabase(path)).toThrow(new RegExp(`schema version ${CURRENT_SCHEMA_VERSION + 3}.*newer Spendmix`));
    const check = new BetterSqlite3(path);
    expect(check.pragma('user_version', { simple: true })).toBe(CURRENT_SCHEMA_VERSION + 3);
    check.close();
  });

  it('refuses an SQLite file that is not a Spendmix database, and a file that is not SQLite', async () => {
    const path = join(folder(), 'other.db');
    const raw = new BetterSqlite3(path);
    raw.exec('CREATE TABLE somebody_else (x)');
    raw.close();
    expect(() => openDatabase(path)).toThrow(/not a Spendmix one/);
    const text = join(folder(), 'text.db');
    (await import('node:fs')).writeFileSync(text, 'this is not a database at all, just some words in a file....');
    expect(() => openDatabase(text)).toThrow(InputError);
  });

  it('read-only opening never migrates: an old database asks to be opened writable once', () => {
    const path = join(folder(), 'ro.db');
    openDatabase(path, { targetVersion: 1 }).close();
    if (CURRENT_SCHEMA_VERSION > 1) expect(() => openDatabase(path, { readonly: true })).toThrow(/needs migrating/);
    expect(() => openDatabase(join(folder(), 'missing.db'), { readonly: true })).toThrow(/does not exist/);
  });

  it('a failing migration leaves the database at its previous version', () => {
    const path = join(folder(), 'fail.db');
    openDatabase(path, { migrationList: migrations.slice(0, 1) }).close();
    const broken = [
      ...migrations.slice(0, 1),
      {
        version: 2,
        name: 'broken',
        up: (db: Database) => {
          db.exec('CREATE TABLE half_done (x)');
          throw new Error('disk on fire');
        },
      },
    ];
    expect(() => openDatabase(path, { migrationList: broken })).toThrow(/disk on fire/);
    const check = new BetterSqlite3(path);
    expect(check.pragma('user_version', { simple: true })).toBe(1);
    expect(check.prepare("SELECT count(*) FROM sqlite_master WHERE name = 'half_done'").pluck().get()).toBe(0);
    check.close();
  });
});
