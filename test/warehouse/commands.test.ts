import { readdirSync, readFileSync, writeFileSync } from 'node:fs';
import { join } from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import type { FeaturesSqlResult, ModelSqlResult } from '../../src/api/contract.js';
import { callApiOutcome } from '../../src/api/handlers.js';
import { ApiSession } from '../../src/api/session.js';
import { cli } from '../support/run-cli.js';
import { runMonth } from '../support/core-calls.js';
import { demoDatabase, type DemoDatabase } from '../runs/demo-database.js';
import { openDuckDb } from './support/engines.js';

/** `features-sql` and `model-sql` (DESIGN.md §10) and the API methods behind them. */

let demo: DemoDatabase;
let runId: number;

beforeAll(async () => {
  demo = await demoDatabase('sample');
  // The three spend features the DuckDB table below holds, and each component its own segment.
  runId = (
    await runMonth(demo.db, {
      asOf: '2026-11-30',
      windowMonths: 12,
      mode: 'refit',
      k: 3,
      covariance: 'diag',
      segmentCount: 3,
      features: [{ feature: 'spend_per_month' }, { feature: 'visits_per_month' }, { feature: 'average_basket' }],
      parentRunId: null,
    })
  ).runId;
}, 300_000);

afterAll(() => demo?.close());

describe('features-sql', () => {
  it('prints the query alone, ready to pipe into the engine', async () => {
    const run = await cli('features-sql', '--as-of', '2026-11-30', '--dialect', 'sqlite', '--receipts-table', 'sales.receipts');
    expect(run.stderr).toBe('');
    expect(run.code).toBe(0);
    expect(run.stdout).toMatch(/^-- Spendmix customer features, sqlite dialect: the 12 months 2025-12-01 to 2026-11-30\./);
    expect(run.stdout).toContain('FROM sales.receipts');
    expect(run.stdout).toContain('julianday');
  });

  it('prints one JSON object with --json', async () => {
    const run = await cli('features-sql', '--as-of', '2026-11-30', '--window-months', '6', '--json');
    expect(run.code).toBe(0);
    const lines = run.stdout.split('\n');
    expect(lines).toHaveLength(2);
    const json = JSON.parse(lines[0]) as FeaturesSqlResult;
    expect(Object.keys(json).sort()).toEqual(['asOf', 'columns', 'dialect', 'sql', 'tables', 'windowMonths', 'windowStart']);
    expect(json).toMatchObject({ dialect: 'duckdb', asOf: '2026-11-30', windowMonths: 6, windowStart: '2026-06-01', tables: { receipts: 'receipts', visits: 'visits', customers: 'customers' } });
    expect(json.columns.at(-1)).toBe('too_new');
  });

  it('takes the window limit from the run schema and names bad options, with exit code 2', async () => {
    const tooLong = await cli('features-sql', '--as-of', '2026-11-30', '--window-months', '61');
    expect(tooLong.code).toBe(2);
    expect(tooLong.stderr).toContain('the window in months (windowMonths, --window-months) must be at most 60 (got 61)');
    const dialect = await cli('features-sql', '--as-of', '2026-11-30', '--dialect', 'oracle');
    expect(dialect.code).toBe(2);
    expect(dialect.stderr).toContain('(dialect, --dialect) must be one of duckdb, postgres, sqlite (got "oracle")');
    const table = await cli('features-sql', '--as-of', '2026-11-30', '--visits-table', 'visits; DROP TABLE receipts');
    expect(table.code).toBe(2);
    expect(table.stderr).toContain('is not a plain table name');
    const noDate = await cli('features-sql');
    expect(noDate.code).toBe(2);
    expect(noDate.stderr).toContain('the last day of the window (asOf, --as-of) is required');
  });
});

describe('model-sql', () => {
  it('prints the scoring query of the latest run, which DuckDB runs as it is', async () => {
    const run = await cli('model-sql', '--db', demo.path, '--run', 'latest', '--features-table', 'placed');
    expect(run.stderr).toBe('');
    expect(run.code).toBe(0);
    expect(run.stdout).toMatch(new RegExp(`^-- Spendmix scoring query of run ${runId}, duckdb dialect: diag covariance, 3 component\\(s\\), 3 segment\\(s\\)\\.`));
    const engine = await openDuckDb();
    try {
      await engine.run('CREATE TABLE placed (customer_id VARCHAR, spend_per_month DOUBLE, visits_per_month DOUBLE, average_basket DOUBLE)');
      await engine.run("INSERT INTO placed VALUES ('A', 250, 6, 41.5), ('B', 20, 1, 20)");
      const rows = await engine.query(`${run.stdout} ORDER BY customer_id`);
      expect(rows.map((row) => Object.keys(row))).toEqual([
        ['customer_id', 'segment', 'confidence', 'margin', 'borderline', 'atypical'],
        ['customer_id', 'segment', 'confidence', 'margin', 'borderline', 'atypical'],
      ]);
      expect(rows[0].segment).not.toBe(rows[1].segment);
    } finally {
      await engine.close();
    }
  });

  it('prints one JSON object with --json', async () => {
    const run = await cli('model-sql', '--db', demo.path, '--run', String(runId), '--dialect', 'postgres', '--json');
    expect(run.code).toBe(0);
    const json = JSON.parse(run.stdout) as ModelSqlResult;
    expect(json).toMatchObject({
      dialect: 'postgres',
      runId,
      featuresTable: 'customer_features',
      features: ['spend_per_month', 'visits_per_month', 'average_basket'],
      components: 3,
      columns: ['customer_id', 'segment', 'confidence', 'margin', 'borderline', 'atypical'],
      emptyValues: 'scored on the observed features',
    });
    expect(json.segments).toHaveLength(3);
    expect(json.sql).toContain('AS MATERIALIZED');
  });

  it('writes the query to a file with --out (the same text it prints), replacing an older one whole', async () => {
    const printed = await cli('model-sql', '--db', demo.path, '--run', String(runId), '--dialect', 'sqlite');
    const out = join(demo.folder, 'score.sql');
    writeFileSync(out, 'an older query\n'.repeat(10_000));
    const written = await cli('model-sql', '--db', demo.path, '--run', String(runId), '--dialect', 'sqlite', '--out', out);
    expect(written.code, written.stderr).toBe(0);
    expect(written.stdout.trim()).toBe(`Wrote the scoring query of run ${runId} (sqlite, reading customer_features) to ${out}`);
    expect(readFileSync(out, 'utf8')).toBe(printed.stdout);
    const json = JSON.parse((await cli('model-sql', '--db', demo.path, '--run', String(runId), '--out', out, '--json')).stdout) as ModelSqlResult;
    expect(json.out).toBe(out);
    expect(readFileSync(out, 'utf8')).toBe(json.sql);
    expect(readdirSync(demo.folder).filter((name) => name.endsWith('.partial'))).toEqual([]);
    const noFolder = await cli('model-sql', '--db', demo.path, '--run', String(runId), '--out', join(demo.folder, 'missing', 'score.sql'));
    expect(noFolder.code).toBe(2);
    expect(noFolder.stderr).toContain(`Folder ${join(demo.folder, 'missing')} does not exist`);
  });

  it('refuses what it cannot do, with exit code 2', async () => {
    const noRun = await cli('model-sql', '--db', demo.path, '--run', '99');
    expect(noRun.code).toBe(2);
    expect(noRun.stderr).toContain('no run 99');
    const missing = await cli('model-sql', '--db', `${demo.path}.missing`, '--run', 'latest');
    expect(missing.code).toBe(2);
    expect(missing.stderr).toContain('does not exist');
    const noRunOption = await cli('model-sql', '--db', demo.path);
    expect(noRunOption.code).toBe(2);
    expect(noRunOption.stderr).toContain('--run');
  });
});

describe('the API methods', () => {
  it('featuresSql needs no database; modelSql works on the session database and reports a refusal as input', async () => {
    const session = new ApiSession({ shell: 'cli' });
    try {
      const features = await callApiOutcome(session, 'featuresSql', { asOf: '2026-11-30' });
      expect(features.ok && (features.value as FeaturesSqlResult).windowMonths).toBe(12);
      const withoutDatabase = await callApiOutcome(session, 'modelSql', { runId: 1 });
      expect(withoutDatabase.ok === false && withoutDatabase.error).toMatchObject({ kind: 'input', message: expect.stringMatching(/No database is open/) });
      session.open(demo.path);
      const model = await callApiOutcome(session, 'modelSql', { runId, dialect: 'sqlite', featuresTable: 'scores_in' });
      expect(model.ok && (model.value as ModelSqlResult).sql).toContain('FROM scores_in');
      const badTable = await callApiOutcome(session, 'modelSql', { runId, featuresTable: 'a-b' });
      expect(badTable.ok === false && badTable.error.kind).toBe('input');
    } finally {
      await session.close();
    }
  });
});
