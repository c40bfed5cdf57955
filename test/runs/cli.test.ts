import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { cli } from '../support/run-cli.js';
import { demoDatabase, type DemoDatabase } from './demo-database.js';

/** refresh, runs and review on the committed 500-customer demo sample, in-process through runCli. */
let demo: DemoDatabase;

beforeAll(async () => {
  demo = await demoDatabase('sample');
  demo.db.close();
});

afterAll(() => demo?.close());

describe('refresh, runs, review', () => {
  it('refresh --json prints exactly the DESIGN.md §10 object; a second month gets a parent and a stability', async () => {
    const first = await cli('refresh', '--db', demo.path, '--as-of', '2026-10-31', '--k', '4', '--covariance', 'diag', '--restarts', '2', '--json');
    expect(first.code).toBe(0);
    const summary = JSON.parse(first.stdout);
    expect(Object.keys(summary)).toEqual(['runId', 'parentRunId', 'k', 'covariance', 'bic', 'customers', 'tooNew', 'borderline', 'atypical', 'segments', 'stability']);
    expect(summary).toMatchObject({ runId: 1, parentRunId: null, k: 4, covariance: 'diag', stability: null });
    expect(Object.keys(summary.segments[0])).toEqual(['name', 'customers', 'share', 'revenueShare']);
    expect(summary.segments.reduce((total: number, segment: { customers: number }) => total + segment.customers, 0)).toBe(summary.customers);
    expect(first.stdout.trim().split('\n')).toHaveLength(1);

    const second = await cli('refresh', '--db', demo.path, '--as-of', '2026-11-30', '--k', 'auto', '--k-max', '4', '--covariance', 'diag', '--json');
    expect(second.code).toBe(0);
    const next = JSON.parse(second.stdout);
    expect(next.parentRunId).toBe(1);
    expect(next.stability).toBeGreaterThan(0);
    expect(next.stability).toBeLessThanOrEqual(1);

    const rescore = await cli('refresh', '--db', demo.path, '--as-of', '2026-11-30', '--mode', 'rescore', '--parent', '1');
    expect(rescore.code).toBe(0);
    expect(rescore.stdout).toMatch(/^Run 3 \(parent 1\): k = 4, diag covariance/);
  });

  it('runs lists them newest first', async () => {
    const listed = await cli('runs', '--db', demo.path, '--json');
    expect(listed.code).toBe(0);
    expect(JSON.parse(listed.stdout).runs.map((run: { runId: number; mode: string }) => [run.runId, run.mode])).toEqual([
      [3, 'rescore'],
      [2, 'refit'],
      [1, 'refit'],
    ]);
    expect((await cli('runs', '--db', demo.path)).stdout).toMatch(/^run {2}parent/);
  });

  it('review lists the queue by spend at stake and records decisions', async () => {
    const listed = await cli('review', '--db', demo.path, '--run', '2', 'list', '--limit', '5', '--json');
    expect(listed.code).toBe(0);
    const queue = JSON.parse(listed.stdout);
    expect(queue.runId).toBe(2);
    expect(queue.items.length).toBeGreaterThan(0);
    const customer = queue.items[0].customerId;
    const target = queue.items[0].secondSegmentName;
    const decided = await cli('review', '--db', demo.path, '--run', '2', 'decide', '--customer', customer, '--action', 'move', '--segment', target, '--note', 'checked by hand', '--json');
    expect(decided.code).toBe(0);
    expect(JSON.parse(decided.stdout).decision).toMatchObject({ action: 'move', segmentName: target, note: 'checked by hand' });
    const human = await cli('review', '--db', demo.path, '--run', 'latest', 'list', '--status', 'done');
    expect(human.code).toBe(0);
  });

  it('bad input exits 2 with a message and stores nothing', async () => {
    const cases: string[][] = [
      ['refresh', '--db', demo.path, '--as-of', '2030-01-31'],
      ['refresh', '--db', demo.path, '--as-of', '31/10/2026'],
      ['refresh', '--db', demo.path, '--as-of', '2026-10-31', '--k', 'many'],
      ['refresh', '--db', demo.path, '--as-of', '2026-10-31', '--covariance', 'round'],
      ['refresh', '--db', demo.path, '--as-of', '2026-10-31', '--mode', 'redo'],
      ['refresh', '--db', `${demo.path}.missing`, '--as-of', '2026-10-31'],
      ['refresh', '--db', demo.path],
      ['review', '--db', demo.path, '--run', '99', 'list'],
      ['review', '--db', demo.path, '--run', '2', 'decide', '--customer', 'C00001', '--action', 'promote'],
      ['review', '--db', demo.path, '--run', '2', 'decide', '--customer', 'NOBODY', '--action', 'keep'],
      ['review', '--db', demo.path, '--run', '2', 'decide', '--customer', 'C00002', '--action', 'move', '--segment', 'Tier 99'],
    ];
    for (const argv of cases) {
      const result = await cli(...argv);
      expect(result.code, argv.join(' ')).toBe(2);
      expect(result.stderr).toMatch(/^spendmix: /);
    }
    expect(JSON.parse((await cli('runs', '--db', demo.path, '--json')).stdout).runs).toHaveLength(3);
  });
});
