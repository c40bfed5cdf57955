import { z } from 'zod';
import { named, nonEmpty, runId } from './fields.js';
import { windowSettings } from './settings.js';

/**
 * SQL for the chain's own engine (DESIGN.md §8a; `features-sql` and `model-sql`): the feature
 * query over the chain's receipts, visits and customers tables, and a run's scoring query.
 */

/** Engines the generated SQL is written for (src/warehouse/dialects.ts holds the same list; a test checks). */
export const sqlDialects = ['duckdb', 'postgres', 'sqlite'] as const;
export type SqlDialectName = (typeof sqlDialects)[number];
const sqlDialect = named(
  z.enum(sqlDialects, { error: `must be one of ${sqlDialects.join(', ')}` }).default('duckdb'),
  'the SQL engine the query is written for',
  '--dialect',
);
/** A table name as the analyst's engine knows it; src/warehouse refuses anything but plain (schema.)table names. */
const tableName = nonEmpty.max(200);

export const featuresSqlInput = z.strictObject({
  asOf: windowSettings.asOf,
  windowMonths: windowSettings.windowMonths,
  minPurchases: windowSettings.minPurchases,
  minTenureMonths: windowSettings.minTenureMonths,
  freshCategories: windowSettings.freshCategories,
  dialect: sqlDialect,
  receiptsTable: named(tableName.default('receipts'), "the chain's receipts table", '--receipts-table'),
  visitsTable: named(tableName.default('visits'), "the chain's visits table", '--visits-table'),
  customersTable: named(tableName.default('customers'), "the chain's customers table", '--customers-table'),
});
/** The feature query: one row per customer with customer_id, the features under the app's names, too_new. */
export interface FeaturesSqlResult {
  sql: string;
  dialect: SqlDialectName;
  asOf: string;
  windowMonths: number;
  /** First day of the window (YYYY-MM-DD); the window ends on asOf. */
  windowStart: string;
  tables: { receipts: string; visits: string; customers: string };
  /** Output columns in order. */
  columns: string[];
}

export const modelSqlInput = z.strictObject({
  runId,
  dialect: sqlDialect,
  featuresTable: named(tableName.default('customer_features'), 'the table of customer_id and the run\'s features in original units', '--features-table'),
  out: named(
    nonEmpty.max(4096).optional(),
    'a file to write the query to (absent: the query is only returned; the browser host writes it for one download)',
    '--out <file.sql>',
  ),
});
/** A run's scoring query: reads customer_id and `features` from the table, returns `columns`. */
export interface ModelSqlResult {
  sql: string;
  dialect: SqlDialectName;
  runId: number;
  featuresTable: string;
  /** Feature columns the query reads (original units), in model order. */
  features: string[];
  segments: string[];
  components: number;
  columns: string[];
  /** How a row with an empty feature is treated. */
  emptyValues: 'scored on the observed features' | 'not scored';
  /** The file the query was written to, or null when none was asked for. */
  out: string | null;
}
