import BetterSqlite3, { type Database } from 'better-sqlite3';
import { accessSync, constants, existsSync, statSync } from 'node:fs';
import { basename, dirname, resolve } from 'node:path';
import { InputError, environmentError } from '../errors.js';
import { requireHealthyDatabase } from './health.js';
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
 * `<path>.backup-v<old version>`. A database written by a newer Spendmix is refused, and so is
 * a damaged one (health.ts) and, for work, one this user cannot write (with its -wal/-shm files).
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
  if (!options.readonly) requireWritable(path);
  let db: Database;
  try {
    db = new BetterSqlite3(path, { readonly: options.readonly ?? false, fileMustExist: options.readonly ?? false });
  } catch (error) {
    throw asDatabaseInputError(path, error);
  }
  try {
    db.pragma(`busy_timeout = ${Math.max(0, Math.floor(options.busyTimeoutMs ?? 2000))}`);
    // Read first: SQLite rolls back a hot journal left by a killed writer before the file is checked.
    const version = schemaVersion(db);
    requireHealthyDatabase(db, path);
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

/** Turns SQLite's file-level failures (locked, read-only, full, damaged) into messages a user can act on. */
export function asDatabaseInputError(path: string, error: unknown): unknown {
  return environmentError(error, `Database ${path}`) ?? error;
}

/** The error of writing to `path` as this user, or null when it may be written. */
function writeDenied(path: string): NodeJS.ErrnoException | null {
  try {
    accessSync(path, constants.W_OK);
    return null;
  } catch (error) {
    return error as NodeJS.ErrnoException;
  }
}

/**
 * Before a database is opened for work: the file, the -wal/-shm files SQLite keeps beside it, and
 * the folder (where SQLite creates its journal files) must be writable by this user. Checked
 * first so that a refresh is refused at the start, not after the whole fit, and so that the
 * message names the file in the way: read-only -wal/-shm files left by another user or program
 * keep blocking after the database itself has been made writable.
 */
function requireWritable(path: string): void {
  if (path === '' || path === ':memory:') return;
  const file = resolve(path);
  const folder = dirname(file);
  const companions = ['-wal', '-shm'].map((suffix) => `${file}${suffix}`).filter((companion) => existsSync(companion));
  const blocked = companions.map((companion) => ({ companion, error: writeDenied(companion) })).filter((entry) => entry.error !== null);
  const blockedNames = blocked.map((entry) => basename(entry.companion)).join(' and ');
  const fileError = existsSync(file) ? writeDenied(file) : null;
  if (fileError) {
    throw new InputError(
      `Database ${file} cannot be written by this user (${fileError.message}). ` +
        'Make it writable by this user (ls -l shows its owner and permissions), or work on a copy of your own.' +
        (blocked.length > 0 ? ` Its ${blockedNames} beside it must be writable too.` : ''),
      { code: fileError.code },
    );
  }
  if (blocked.length > 0) {
    const { code, message } = blocked[0].error!;
    throw new InputError(
      `Database ${file} is writable, but ${blockedNames} beside it ${blocked.length > 1 ? 'are' : 'is'} not (${message}). ` +
        'SQLite writes these files (left by an earlier session of another user or program) to open the database, so they block it. ' +
        'Make them writable by this user (chown or chmod; ls -l shows who owns them) and try again; do not delete the -wal file, it may hold the last saved changes.',
      { code },
    );
  }
  const folderError = writeDenied(folder);
  if (folderError) {
    throw new InputError(
      `Folder ${folder} cannot be written by this user (${folderError.message}); SQLite keeps the database's journal files beside it, and imports write their reports there. ` +
        'Choose a folder this user may write to, or make this one writable.',
      { code: folderError.code },
    );
  }
}

export { CURRENT_SCHEMA_VERSION };
