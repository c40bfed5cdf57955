import BetterSqlite3, { type Database } from 'better-sqlite3';
import { existsSync, statSync } from 'node:fs';
import { InputError } from '../errors.js';
import { CURRENT_SCHEMA_VERSION, migrations, type Migration } from './migrations.js';

export type { Database } from 'better-sqlite3';

export interface OpenDatabaseOptions {
  /** Open without writing anything; the file must exist and be at the current schema version. */
  readonly?: boolean;
  /** Milliseconds to wait for another writer before giving up (default 2000). */
  busyTimeoutMs?: number;
  /** Migrate only up to this version (tests build old-version databases this way). */
  targetVersion?: number;
  /** The migration list to apply (tests only; defaults to the product's list). */
  migrationList?: readonly Migration[];
}

/**
 * Opens (creating if needed) a Spendmix database: WAL journal, foreign keys on, schema migrated
 * forward. Before migrating a database that already holds data, a copy is written to
 * `<path>.backup-v<old version>`. A database written by a newer Spendmix is refused.
 */
export function openDatabase(path: string, options: OpenDatabaseOptions = {}): Database {
  const list = options.migrationList ?? migrations;
  checkMigrationList(list);
  const target = options.targetVersion ?? list.length;
  if (options.readonly && !existsSync(path)) {
    throw new InputError(`Database ${path} does not exist.`);
  }
  if (!options.readonly && existsSync(path) && statSync(path).isDirectory()) {
    throw new InputError(`${path} is a folder, not a database file.`);
  }
  let db: Database;
  try {
    db = new BetterSqlite3(path, { readonly: options.readonly ?? false, fileMustExist: options.readonly ?? false });
  } catch (error) {
    throw asDatabaseInputError(path, error);
  }
  try {
    db.pragma(`busy_timeout = ${Math.max(0, Math.floor(options.busyTimeoutMs ?? 2000))}`);
    const version = schemaVersion(db);
    if (version > list.length) {
      throw new InputError(
        `Database ${path} has schema version ${version}, but this Spendmix knows versions up to ${list.length}. ` +
          'It was written by a newer Spendmix; open it with that version.',
      );
    }
    if (version === 0 && userTableCount(db) > 0) {
      throw new InputError(`${path} is an SQLite database but not a Spendmix one (it has tables and no schema version).`);
    }
    if (options.readonly) {
      if (version < target) {
        throw new InputError(
          `Database ${path} has schema version ${version} and needs migrating to ${target}; open it once without read-only.`,
        );
      }
    } else {
      if (path !== ':memory:') db.pragma('journal_mode = WAL');
      // NORMAL is crash-safe in WAL mode (a kill or power loss never corrupts; at worst the last
      // commit is rolled back) and much faster than FULL (SQLite documentation, from memory).
      db.pragma('synchronous = NORMAL');
      if (version < target) migrate(db, path, version, target, list);
    }
    db.pragma('foreign_keys = ON');
    return db;
  } catch (error) {
    db.close();
    throw asDatabaseInputError(path, error);
  }
}

export function schemaVersion(db: Database): number {
  return Number(db.pragma('user_version', { simple: true }));
}

function userTableCount(db: Database): number {
  const row = db.prepare("SELECT count(*) AS n FROM sqlite_master WHERE type = 'table' AND name NOT LIKE 'sqlite_%'").get() as {
    n: number;
  };
  return row.n;
}

function migrate(db: Database, path: string, from: number, to: number, list: readonly Migration[]): void {
  if (from > 0 && path !== ':memory:' && path !== '') backupBeforeMigration(db, path, from);
  for (const migration of list.slice(from, to)) {
    db.transaction(() => {
      migration.up(db);
      db.pragma(`user_version = ${migration.version}`);
    }).immediate();
  }
}

/** Writes a consistent copy of the database (VACUUM INTO reads a snapshot, WAL included). */
export function backupBeforeMigration(db: Database, path: string, version: number): string {
  let target = `${path}.backup-v${version}`;
  for (let attempt = 2; existsSync(target); attempt += 1) target = `${path}.backup-v${version}.${attempt}`;
  db.prepare('VACUUM INTO ?').run(target);
  return target;
}

function checkMigrationList(list: readonly Migration[]): void {
  list.forEach((migration, index) => {
    if (migration.version !== index + 1) {
      throw new Error(`Migration "${migration.name}" has version ${migration.version}; expected ${index + 1} (list order).`);
    }
  });
}

/** Turns SQLite's file-level failures into messages a user can act on. */
export function asDatabaseInputError(path: string, error: unknown): unknown {
  if (error instanceof InputError || !(error instanceof Error)) return error;
  const code = (error as { code?: string }).code ?? '';
  if (code.startsWith('SQLITE_BUSY') || code.startsWith('SQLITE_LOCKED')) {
    return new InputError(`Database ${path} is locked by another program or Spendmix window; close it and try again.`);
  }
  if (code.startsWith('SQLITE_READONLY') || code === 'SQLITE_CANTOPEN' || code.startsWith('SQLITE_CANTOPEN') || code === 'SQLITE_PERM') {
    return new InputError(`Database ${path} cannot be written (read-only file or folder, or no permission): ${error.message}`);
  }
  if (code === 'SQLITE_NOTADB' || code === 'SQLITE_CORRUPT') {
    return new InputError(`${path} is not a usable SQLite database: ${error.message}`);
  }
  return error;
}

export { CURRENT_SCHEMA_VERSION };
