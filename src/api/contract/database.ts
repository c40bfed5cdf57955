import { z } from 'zod';
import { named, nonEmpty } from './fields.js';

/** The open database and the app around it. */

export const openDatabaseInput = z.strictObject({ path: named(nonEmpty, 'the database file', '--db') });
export const databaseInfoInput = z.strictObject({});

export interface DatabaseInfo {
  path: string;
  schemaVersion: number;
  customers: number;
  receipts: number;
  visits: number;
  imports: number;
  runs: number;
  /** First and last day with receipts or visits (YYYY-MM-DD), null when there are none yet. */
  firstDataDate: string | null;
  lastDataDate: string | null;
}

export const appInfoInput = z.strictObject({});
export interface AppInfo {
  version: string;
  /** Which shell hosts the screens (for wording only, never for logic). */
  shell: 'electron' | 'browser' | 'cli';
  databasePath: string | null;
  recentDatabases: string[];
  /** The cautions of DESIGN.md §14, one paragraph per entry, shown on the Export screen. */
  cautions: string[];
}
