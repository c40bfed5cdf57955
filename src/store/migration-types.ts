import type { Database } from 'better-sqlite3';

/**
 * One forward schema step. `up` runs inside a transaction together with the bump of
 * `PRAGMA user_version` to `version`, so a database is always at exactly one version.
 */
export interface Migration {
  version: number;
  name: string;
  up: (db: Database) => void;
}
