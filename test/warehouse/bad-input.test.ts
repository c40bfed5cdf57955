import { mkdtempSync, readdirSync, readFileSync, rmSync, statSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { dirname, join, relative, resolve, sep } from 'node:path';
import { fileURLToPath } from 'node:url';
import ts from 'typescript';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { defaultFreshCategories, sqlDialects } from '../../src/api/contract.js';
import { isInputError } from '../../src/errors.js';
import { importFile } from '../../src/ingest/import-file.js';
import { rename, runMonth } from '../support/core-calls.js';
import { featuresSql, modelSql, readScoringModel, sqlDialectNames, type ScoringModel } from '../../src/warehouse/index.js';
import { demoDatabase, type DemoDatabase } from '../runs/demo-database.js';
import { agreementOn, engineScores, syntheticRows, writeFeatureCsv } from './support/agreement.js';
import { openDuckDb, openPostgres, openSqlite, postgresBinaries, type Engine } from './support/engines.js';

/**
 * What the generators refuse, and that nothing a user or a data file supplies can change the
 * meaning of the generated SQL: hostile table names are refused; hostile feature and segment
 * names (both reach a run from files and renames) are quoted and run as plain names in all three
 * engines, with a sentinel table still there afterwards.
 */
const hostile = 'x"; DROP TABLE sentinel; --';
const hostileQuote = "basket 'eur'); DROP TABLE sentinel; --";

function refusal(action: () => unknown): string {
  try {
    action();
  } catch (error) {
    expect(isInputError(error), String(error)).toBe(true);
    return (error as Error).message;
  }
  throw new Error('expected an InputError');
}

const tables = { receiptsTable: 'receipts', visitsTable: 'visits', customersTable: 'customers' };
const featureOptions = { asOf: '2026-11-30', windowMonths: 12, dialect: 'duckdb', ...tables, minPurchases: 2, minTenureMonths: 2, freshCategories: defaultFreshCategories };

describe('table names and dialects', () => {
  it.each([hostile, 'receipts; DELETE FROM receipts', 'two words', '1receipts', 'a.b.c.d', '', '"quoted"', 'tab\tname', 'schema..table', 'ümlaut'])(
    'refuses the table name %j everywhere',
    (name) => {
      for (const table of ['receiptsTable', 'visitsTable', 'customersTable'] as const) {
        expect(refusal(() => featuresSql({ ...featureOptions, [table]: name }))).toMatch(/is not a plain table name/);
      }
    },
  );

  it('accepts plain and schema-qualified names as written', () => {
    const { sql } = featuresSql({ ...featureOptions, receiptsTable: 'analytics.Receipts_2026', visitsTable: 'lake.sales.visits', customersTable: '_customers' });
    expect(sql).toContain('FROM analytics.Receipts_2026');
    expect(sql).toContain('FROM lake.sales.visits');
    expect(sql).toContain('FROM _customers');
  });

  it('refuses an unsupported dialect, listing the supported ones', () => {
    expect(refusal(() => featuresSql({ ...featureOptions, dialect: 'oracle' }))).toBe('Unsupported SQL dialect "oracle"; supported dialects: duckdb, postgres, sqlite.');
  });

  it('the API contract offers exactly the dialects the generators write', () => {
    expect([...sqlDialects]).toEqual([...sqlDialectNames]);
  });

  it('refuses a bad as-of date or window with the reason', () => {
    expect(refusal(() => featuresSql({ ...featureOptions, asOf: '2026-02-30' }))).toMatch(/calendar date/);
    expect(refusal(() => featuresSql({ ...featureOptions, windowMonths: 0 }))).toMatch(/whole number of months/);
    expect(refusal(() => featuresSql({ ...featureOptions, minPurchases: -1 }))).toMatch(/minimum purchases/);
  });
});

describe('runs and their names', () => {
  const havePostgres = postgresBinaries() !== null;
  let folder: string;
  let demo: DemoDatabase;
  let runId: number;
  let scoring: ScoringModel;
  const engines: Engine[] = [];

  beforeAll(async () => {
    folder = mkdtempSync(join(tmpdir(), 'spendmix-warehouse-names-'));
    demo = await demoDatabase('sample');
    // A features file prepared elsewhere, with column names that are SQL on purpose.
    const lines = [`customer_id,"${hostile.replace(/"/g, '""')}","${hostileQuote}",plain`];
    for (let i = 0; i < 400; i++) lines.push(`K${i},${10 + (i % 7) * 3 + (i % 3) * 20},${5 + ((i * 13) % 11) + (i % 3) * 8},${(i * 7919) % 100}`);
    writeFileSync(join(folder, 'features.csv'), `${lines.join('\n')}\n`);
    const imported = await importFile(demo.db, { path: join(folder, 'features.csv'), kind: 'features', options: { reportDir: folder } });
    expect(imported.rowsRejected).toBe(0);
    runId = (await runMonth(demo.db, { asOf: '2026-11-30', windowMonths: 12, mode: 'refit', k: 3, covariance: 'full', source: 'imported', parentRunId: null })).runId;
    rename(demo.db, { runId, segment: 0, name: "Tier'); DROP TABLE sentinel; --" });
    scoring = readScoringModel(demo.db, runId);
    expect(scoring.features).toEqual([hostile, hostileQuote, 'plain'].sort());
    engines.push(await openDuckDb(), await openSqlite());
    if (havePostgres || process.env.CI) engines.push(await openPostgres());
  }, 300_000);

  afterAll(async () => {
    for (const engine of engines) await engine.close();
    demo?.close();
    rmSync(folder, { recursive: true, force: true });
  });

  it('quotes hostile feature and segment names: the query runs, scores as the app does, and drops nothing', async () => {
    const rows = syntheticRows(scoring, 2_000, 3, 0.02);
    const csv = join(folder, 'synthetic.csv');
    writeFeatureCsv(csv, scoring.features, rows);
    for (const engine of engines) {
      await engine.run('CREATE TABLE sentinel (kept INTEGER)');
      await engine.loadCsv('customer_features', [{ name: 'customer_id', type: 'text' }, ...scoring.features.map((name) => ({ name, type: 'double' as const }))], csv);
      const agreement = await agreementOn(engine, scoring, rows, 'customer_features');
      expect(agreement.segmentMismatches, `${engine.name}: ${agreement.examples.join('; ')}`).toBe(0);
      expect(agreement.flagMismatches).toBe(0);
      expect(agreement.maxConfidenceDifference).toBeLessThanOrEqual(1e-9);
      const scores = await engineScores(engine, modelSql(scoring, { dialect: engine.name, featuresTable: 'customer_features' }).sql);
      expect([...scores.values()].some((row) => row.segment === "Tier'); DROP TABLE sentinel; --")).toBe(true);
      expect(await engine.query('SELECT count(*) AS n FROM sentinel')).toHaveLength(1);
    }
  });

  it('refuses a hostile features table name', () => {
    expect(refusal(() => modelSql(scoring, { dialect: 'duckdb', featuresTable: hostile }))).toMatch(/features table .* is not a plain table name/);
  });

  it('refuses a run whose model cannot be scored, saying why', () => {
    const db = demo.db;
    expect(refusal(() => readScoringModel(db, 999))).toMatch(new RegExp(`There is no run 999; runs in this database: .*${runId}`));
    const broken = (change: string, expected: RegExp) => {
      db.exec(`SAVEPOINT broken; ${change}`);
      try {
        expect(refusal(() => readScoringModel(db, runId))).toMatch(expected);
      } finally {
        db.exec('ROLLBACK TO broken; RELEASE broken');
      }
    };
    broken(`UPDATE runs SET model = 'null' WHERE run_id = ${runId}`, new RegExp(`Run ${runId} cannot be scored in SQL: it holds no mixture model \\(it has labels but no model to apply\\)`));
    broken(`UPDATE runs SET model = '' WHERE run_id = ${runId}`, /holds no mixture model/);
    broken(`UPDATE runs SET model = '{"format": "spendmix-mixture", "version": 1' WHERE run_id = ${runId}`, /stored mixture model .* is not readable/);
    broken(`UPDATE runs SET model = json_set(model, '$.weights[0]', 'x') WHERE run_id = ${runId}`, /"weights" must be 3 finite numbers/);
    broken(`UPDATE runs SET transforms = '{}' WHERE run_id = ${runId}`, /transform of feature .* has no usable fitted parameters/);
    broken(`UPDATE runs SET features = '["plain"]' WHERE run_id = ${runId}`, /3 dimension\(s\) but 1 feature name/);
    broken(`UPDATE run_segments SET name = '' WHERE run_id = ${runId} AND segment_index = 0`, /segment 1 has no name/);
    broken(
      `DELETE FROM run_segments WHERE run_id = ${runId} AND segment_index = (SELECT max(segment_index) FROM run_segments WHERE run_id = ${runId})`,
      /component \d+ maps to segment -1/,
    );
    broken(`UPDATE run_segments SET components = '[0]' WHERE run_id = ${runId}`, /component 1 is in two segments/);
    broken(`UPDATE runs SET settings = json_set(settings, '$.borderlineConfidence', 7) WHERE run_id = ${runId}`, /borderline thresholds are not probabilities/);
  });

  it('refuses a component-to-segment map that does not fit the model', () => {
    const refused = (segments: ScoringModel['segments'], expected: RegExp) =>
      expect(refusal(() => modelSql({ ...scoring, segments }, { dialect: 'duckdb', featuresTable: 't' }))).toMatch(expected);
    refused({ names: ['A', 'B'], ofComponent: [0, 1] }, /map has 2 entries for 3 components/);
    refused({ names: ['A', 'B'], ofComponent: [0, 1, 2] }, /component 3 maps to segment 2, but there are 2 segments/);
    refused({ names: ['A', 'B', 'C'], ofComponent: [0, 1, 1] }, /segment "C" has no component/);
    refused({ names: ['A', 'A'], ofComponent: [0, 1, 1] }, /two segments have the same name/);
    refused({ names: ['A', 'B\u0000'], ofComponent: [0, 1, 1] }, /NUL character/);
  });
});

describe('layering (DESIGN.md §2)', () => {
  const root = fileURLToPath(new URL('../..', import.meta.url));
  const files = (folder: string): string[] =>
    readdirSync(folder).flatMap((entry) => {
      const path = join(folder, entry);
      return statSync(path).isDirectory() ? files(path) : path.endsWith('.ts') ? [path] : [];
    });
  const importsOf = (file: string) =>
    ts
      .preProcessFile(readFileSync(file, 'utf8'), true, true)
      .importedFiles.map((reference) => reference.fileName)
      .filter((specifier) => specifier.startsWith('.'))
      .map((specifier) => relative(join(root, 'src'), resolve(dirname(file), specifier)).split(sep));

  it('src/warehouse reads only the model through its index, the features, the store and the errors', () => {
    for (const file of files(join(root, 'src', 'warehouse'))) {
      for (const [top, ...rest] of importsOf(file)) {
        const allowed = top === 'warehouse' || top === 'features' || top === 'store' || top === 'errors.js' || (top === 'model' && rest.join('/') === 'index.js');
        expect(allowed, `${relative(root, file)} imports src/${[top, ...rest].join('/')}`).toBe(true);
      }
    }
  });

  it('only the API and the CLI import src/warehouse', () => {
    for (const file of files(join(root, 'src'))) {
      const [own] = relative(join(root, 'src'), file).split(sep);
      if (own === 'warehouse' || own === 'api' || own === 'cli') continue;
      expect(importsOf(file).some(([top]) => top === 'warehouse'), relative(root, file)).toBe(false);
    }
  });
});
