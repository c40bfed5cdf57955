import { mkdtempSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { defaultFreshCategories } from '../../src/api/contract.js';
import { computedFeatureNames, featureFormulas } from '../../src/features/definitions.js';
import { computeReceiptFeatures, loadImportedFeatures, type FeatureTable } from '../../src/features/compute.js';
import { importFile } from '../../src/ingest/import-file.js';
import { openDatabase, type Database } from '../../src/store/database.js';
import { featuresSql, type SqlDialectName } from '../../src/warehouse/index.js';
import { sampleDir } from '../runs/demo-database.js';
import { chainFileColumns, openDuckDb, openPostgres, openSqlite, postgresBinaries, type Engine } from './support/engines.js';

/**
 * The generated feature query against the app's own feature computation, in DuckDB, SQLite and
 * PostgreSQL: the chain's files loaded as the engine's tables, the query's output written as CSV
 * and imported with the app's importer (`import --features`), then compared customer by customer
 * with the features the app computes from the same files imported as receipts, visits and
 * customers. Data: the demo chain's committed sample (demo-data/sample, 500 invented customers of
 * Larkmoor Fresh Markets), a small hand-made chain with the corner cases the definitions name, and
 * one whose receipts carry dates only (an empty shopping clock).
 */

// PostgreSQL runs wherever it is installed; CI installs it (.ci/run), so there it must be present.
const havePostgres = postgresBinaries() !== null;
const engineNames: SqlDialectName[] = havePostgres || process.env.CI ? ['duckdb', 'sqlite', 'postgres'] : ['duckdb', 'sqlite'];


/**
 * A hand-made chain (invented ids) with the cases the definitions treat apart: a receipt without
 * id over two departments (one purchase), a refund-only window, a join date after the as-of date,
 * visits only before the window, a customer absent from the customers file, rows without a
 * department, a receipt split into one-decimal amounts, a customer whose only window rows are
 * refunds and zero amounts, a visit long before the first receipt, which counts for tenure
 * only when some visit falls in the window, and a last visit with a date but no time (at midday
 * on the shopping clock, in the app and in the engines, where the date alone reads as midnight).
 */
const cornerReceipts = [
  'receipt_id,customer_id,store_id,date,category,amount',
  'R1,A,S1,2026-01-10T10:00:00,fresh,20.00',
  'R1,A,S1,2026-01-10T10:00:00,pantry,10.5',
  'R2,A,S1,2026-07-15T11:00:00,Fresh,15.25',
  'R3,A,S1,2026-10-05T12:00:00,DAIRY,40.00',
  'R4,A,S1,2026-10-20T12:00:00,pantry,-5.00',
  'R0,A,S1,2025-11-20T10:00:00,pantry,50.00',
  ',B,S1,2026-11-01T09:00:00,bakery,12.00',
  ',B,S1,2026-11-01T09:00:00,dairy,8.00',
  'R9,B,S2,2026-11-20T09:30:00,,30.00',
  'R8,C,S2,2025-10-01T09:30:00,fresh,30.00',
  'R7,D,S2,2026-03-01T09:30:00,fresh,-12.00',
  'R6,D,S2,2026-03-02T09:30:00,fresh,0.00',
  'R5,E,S3,2026-02-01T18:00:00,household,99.99',
  'R10,E,S3,2026-06-01T18:00:00,household,0.01',
  'R11,E,S3,2026-08-31T18:00:00,meat,45.10',
  'R12,F,S1,2026-11-30T23:59:00,deli,7.77',
  'R13,G,S1,2026-02-10T10:00:00,fresh,25.00',
  'R14,G,S1,2026-03-20T10:00:00,pantry,30.00',
].join('\n');
const cornerVisits = [
  'customer_id,date,store_id,channel',
  'A,2026-01-10T10:00:00,S1,store',
  'A,2026-07-15T11:00:00,S1,store',
  'A,2026-10-05T12:00:00,S1,store',
  'A,2026-10-20T12:00:00,S1,store',
  'A,2026-11-02,S1,online',
  'E,2025-06-01T10:00:00,S3,store',
  'D,2026-12-05T10:00:00,S2,store',
  'G,2025-05-01T10:00:00,S1,store',
].join('\n');
const cornerCustomers = [
  'customer_id,joined,marketing_consent,home_store',
  'A,2025-06-10,yes,S1',
  'B,,no,S1',
  'D,2027-01-01,yes,S2',
  'E,2024-03-15,,S3',
  'F,2026-11-30,yes,S1',
].join('\n');

/**
 * A chain whose receipts carry dates only (no clock times) while its visits carry times: the
 * shopping clock is then empty and the visits' times count on the wall clock, in the app and in
 * the engines alike.
 */
const dateOnlyReceipts = [
  'receipt_id,customer_id,store_id,date,category,amount',
  'Q1,H,S1,2026-09-14,fresh,31.00',
  'Q2,H,S1,2026-11-03,pantry,12.40',
  'Q3,K,S2,2026-10-01,dairy,8.15',
  'Q4,K,S2,2026-11-29,fresh,22.00',
].join('\n');
const dateOnlyVisits = ['customer_id,date,store_id,channel', 'H,2026-11-20T17:45:00,S1,store', 'K,2026-11-29,S2,store'].join('\n');
const dateOnlyCustomers = ['customer_id,joined,marketing_consent,home_store', 'H,2025-01-05,yes,S1', 'K,2025-03-09,no,S2'].join('\n');

let folder: string;
const engines = new Map<SqlDialectName, Engine>();
/** The app's databases built from the same files with its importer. */
const appDatabases = new Map<string, Database>();

async function appDatabase(name: string, dir: string): Promise<Database> {
  const db = openDatabase(join(folder, `${name}.db`));
  for (const kind of ['customers', 'receipts', 'visits'] as const) {
    const result = await importFile(db, { path: join(dir, `${kind}.csv`), kind, options: { reportDir: folder } });
    expect(result.rowsRejected).toBe(0);
  }
  return db;
}

beforeAll(async () => {
  folder = mkdtempSync(join(tmpdir(), 'spendmix-features-sql-'));
  for (const [kind, text] of [['receipts', cornerReceipts], ['visits', cornerVisits], ['customers', cornerCustomers]] as const) {
    writeFileSync(join(folder, `corner-${kind}.csv`), `${text}\n`);
  }
  for (const [kind, text] of [['receipts', dateOnlyReceipts], ['visits', dateOnlyVisits], ['customers', dateOnlyCustomers]] as const) {
    writeFileSync(join(folder, `dateonly-${kind}.csv`), `${text}\n`);
  }
  const dateOnlyFiles = (kind: string) => join(folder, `dateonly-${kind}.csv`);
  const dateOnly = openDatabase(join(folder, 'dateonly.db'));
  for (const kind of ['customers', 'receipts', 'visits'] as const) {
    const result = await importFile(dateOnly, { path: dateOnlyFiles(kind), kind, options: { reportDir: folder } });
    expect(result.rowsRejected).toBe(0);
  }
  appDatabases.set('dateonly', dateOnly);
  const cornerFiles = (kind: string) => join(folder, `corner-${kind}.csv`);
  appDatabases.set('demo', await appDatabase('demo', sampleDir));
  const corner = openDatabase(join(folder, 'corner.db'));
  for (const kind of ['customers', 'receipts', 'visits'] as const) {
    const result = await importFile(corner, { path: cornerFiles(kind), kind, options: { reportDir: folder } });
    expect(result.rowsRejected).toBe(0);
  }
  appDatabases.set('corner', corner);

  for (const name of engineNames) {
    const engine = name === 'duckdb' ? await openDuckDb() : name === 'sqlite' ? await openSqlite() : await openPostgres();
    engines.set(name, engine);
    for (const kind of ['receipts', 'visits', 'customers']) {
      await engine.loadCsv(`demo_${kind}`, chainFileColumns(join(sampleDir, `${kind}.csv`)), join(sampleDir, `${kind}.csv`));
      await engine.loadCsv(`corner_${kind}`, chainFileColumns(cornerFiles(kind)), cornerFiles(kind));
      await engine.loadCsv(`dateonly_${kind}`, chainFileColumns(dateOnlyFiles(kind)), dateOnlyFiles(kind));
    }
  }
}, 300_000);

afterAll(async () => {
  for (const engine of engines.values()) await engine.close();
  for (const db of appDatabases.values()) db.close();
  rmSync(folder, { recursive: true, force: true });
});

/** Writes the engine's rows as the CSV an analyst would export (empty cell for NULL). */
function writeCsv(path: string, columns: string[], rows: Record<string, unknown>[]): void {
  const cell = (value: unknown) => (value === null || value === undefined ? '' : typeof value === 'bigint' ? value.toString() : String(value));
  writeFileSync(path, `${columns.join(',')}\n${rows.map((row) => columns.map((column) => cell(row[column])).join(',')).join('\n')}\n`);
}

let exportCounter = 0;
/** Runs the query in the engine, exports the rows as CSV, imports them as a features file, reads them back. */
async function throughImport(engine: Engine, sql: string, columns: string[]): Promise<FeatureTable> {
  const csv = join(folder, `features-${++exportCounter}.csv`);
  if (engine.name === 'duckdb') {
    await engine.run(`COPY (${sql}) TO '${csv}' (HEADER, DELIMITER ',')`);
  } else {
    writeCsv(csv, columns, await engine.query(sql));
  }
  const db = openDatabase(join(folder, `imported-${exportCounter}.db`));
  try {
    const result = await importFile(db, { path: csv, kind: 'features', options: { reportDir: folder } });
    expect(result.rowsRejected).toBe(0);
    return loadImportedFeatures(db, { asOf: '2026-11-30', windowMonths: 12 });
  } finally {
    db.close();
  }
}

interface FeatureComparison {
  customers: number;
  maxRelativeDifference: number;
  exactValues: number;
  values: number;
  tooNewMismatches: number;
}

function compareTables(app: FeatureTable, imported: FeatureTable): FeatureComparison {
  expect([...imported.customerIds].sort()).toEqual([...app.customerIds].sort());
  expect([...imported.names].sort()).toEqual([...app.names].sort());
  const at = new Map(imported.customerIds.map((id, i) => [id, i]));
  const comparison: FeatureComparison = { customers: app.customerIds.length, maxRelativeDifference: 0, exactValues: 0, values: 0, tooNewMismatches: 0 };
  app.names.forEach((name, j) => {
    const theirs = imported.columns[imported.names.indexOf(name)];
    app.customerIds.forEach((id, i) => {
      const a = app.columns[j][i];
      const b = theirs[at.get(id)!];
      comparison.values++;
      if (Object.is(a, b)) comparison.exactValues++;
      const difference = Number.isNaN(a) && Number.isNaN(b) ? 0 : a === b ? 0 : Math.abs(a - b) / Math.max(Math.abs(a), Math.abs(b));
      if (!(difference <= comparison.maxRelativeDifference)) comparison.maxRelativeDifference = difference;
    });
  });
  app.customerIds.forEach((id, i) => {
    if (app.tooNew[i] !== imported.tooNew[at.get(id)!]) comparison.tooNewMismatches++;
  });
  return comparison;
}

const cases: { data: 'demo' | 'corner' | 'dateonly'; asOf: string; windowMonths: number; minPurchases: number; minTenureMonths: number }[] = [
  { data: 'demo', asOf: '2026-11-30', windowMonths: 12, minPurchases: 2, minTenureMonths: 2 },
  { data: 'demo', asOf: '2026-02-28', windowMonths: 3, minPurchases: 1, minTenureMonths: 0.5 },
  { data: 'demo', asOf: '2025-07-31', windowMonths: 24, minPurchases: 2, minTenureMonths: 2 },
  { data: 'corner', asOf: '2026-11-30', windowMonths: 12, minPurchases: 2, minTenureMonths: 2 },
  { data: 'corner', asOf: '2026-11-30', windowMonths: 2, minPurchases: 0, minTenureMonths: 0 },
  // No visit falls in this window: purchases are the visits and earlier visits do not count, as in the app.
  { data: 'corner', asOf: '2026-03-31', windowMonths: 2, minPurchases: 2, minTenureMonths: 2 },
  // No receipt with a clock time: an empty shopping clock, the wall clock for the visits' times.
  { data: 'dateonly', asOf: '2026-11-30', windowMonths: 12, minPurchases: 2, minTenureMonths: 2 },
];

describe.each(engineNames)('features-sql in %s agrees with the app after import --features', (dialect) => {
  it.each(cases)('$data chain, $windowMonths months to $asOf', async ({ data, asOf, windowMonths, minPurchases, minTenureMonths }) => {
    const engine = engines.get(dialect)!;
    const query = featuresSql({
      asOf,
      windowMonths,
      dialect,
      receiptsTable: `${data}_receipts`,
      visitsTable: `${data}_visits`,
      customersTable: `${data}_customers`,
      minPurchases,
      minTenureMonths,
      freshCategories: defaultFreshCategories,
    });
    expect(query.columns).toEqual(['customer_id', ...computedFeatureNames, 'too_new']);
    const imported = await throughImport(engine, query.sql, query.columns);
    const app = computeReceiptFeatures(appDatabases.get(data)!, { asOf, windowMonths, minPurchases, minTenureMonths, freshCategories: defaultFreshCategories });
    const comparison = compareTables(app, imported);
    expect(comparison.customers).toBeGreaterThan(0);
    expect(comparison.tooNewMismatches).toBe(0);
    expect(comparison.maxRelativeDifference).toBeLessThanOrEqual(1e-9);
    // The same double operations in the same order: every value is the app's to the last bit.
    expect(comparison.exactValues).toBe(comparison.values);
    if (data === 'dateonly') {
      // H's last visit, 17:45 on 2026-11-20, on the wall clock: 10 days and 6.25 hours to the end
      // of the as-of day, at H's visit rate (2 purchases against 1 row in the visits file: the
      // larger count); the engines' value is the app's to the bit (above).
      const gapsOfH = imported.columns[imported.names.indexOf('gaps_since_last_visit')][imported.customerIds.indexOf('H')];
      const visitsOfH = imported.columns[imported.names.indexOf('visits_per_month')][imported.customerIds.indexOf('H')];
      expect(gapsOfH).toBeCloseTo(((10 + 6.25 / 24) * visitsOfH) / 30.4375, 12);
    }
    if (data === 'corner' && windowMonths === 12) {
      // A's last visit, 2026-11-02 with no time, counts as at midday; on the shopping clock 10 of
      // the window's 16 receipt rows with a time come before midday (a receipt split by department
      // counts per row), so 29 − 10/16 days to the end of the as-of day, at 5 visits in 12 months.
      const gapsOfA = imported.columns[imported.names.indexOf('gaps_since_last_visit')][imported.customerIds.indexOf('A')];
      expect(gapsOfA).toBeCloseTo(((29 - 10 / 16) * 5) / 12 / 30.4375, 12);
    }
  });
});

describe('features-sql output', () => {
  it('reads the feature formulas in the order of the feature names', () => {
    expect(featureFormulas.map((feature) => feature.name)).toEqual([...computedFeatureNames]);
  });

  it('leaves the fresh share empty when no receipt carries a department, and the import then leaves it out as the app does', async () => {
    const engine = engines.get('duckdb')!;
    await engine.run('CREATE TABLE plain_receipts AS SELECT receipt_id, customer_id, store_id, date, CAST(NULL AS VARCHAR) AS category, amount FROM demo_receipts');
    const query = featuresSql({
      asOf: '2026-11-30',
      windowMonths: 12,
      dialect: 'duckdb',
      receiptsTable: 'plain_receipts',
      visitsTable: 'demo_visits',
      customersTable: 'demo_customers',
      minPurchases: 2,
      minTenureMonths: 2,
      freshCategories: defaultFreshCategories,
    });
    const rows = await engine.query(query.sql);
    expect(rows.length).toBeGreaterThan(400);
    expect(rows.every((row) => row.fresh_share === null)).toBe(true);
    const imported = await throughImport(engine, query.sql, query.columns);
    expect(imported.names).not.toContain('fresh_share');
    expect(imported.names).not.toContain('too_new');
  });

  it('is one statement the engines accept as it is, starting with comments and WITH', () => {
    for (const dialect of ['duckdb', 'postgres', 'sqlite'] as const) {
      const { sql } = featuresSql({ asOf: '2026-11-30', windowMonths: 12, dialect, receiptsTable: 'r', visitsTable: 'v', customersTable: 'c', minPurchases: 2, minTenureMonths: 2, freshCategories: defaultFreshCategories });
      const code = sql.split('\n').filter((line) => !line.startsWith('--'));
      expect(code[0]).toMatch(/^WITH /);
      expect(code.join('\n')).not.toContain(';');
    }
  });
});
