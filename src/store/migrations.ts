import type { Migration } from './migration-types.js';
import { coreTables } from './migrations/001-core-tables.js';
import { runTables } from './migrations/002-runs.js';
import { runSamples } from './migrations/003-run-samples.js';
import { segmentsOfComponents } from './migrations/004-segments.js';

export type { Migration } from './migration-types.js';

/**
 * Every schema migration, in order. Add a migration by writing src/store/migrations/NNN-name.ts
 * and appending it here; versions must be 1, 2, 3, … without gaps (checked at start-up).
 */
export const migrations: readonly Migration[] = [
  coreTables,
  runTables,
  runSamples,
  segmentsOfComponents,
];

export const CURRENT_SCHEMA_VERSION = migrations.length;
