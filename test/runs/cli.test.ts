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
    expect(Object.keys(summary)).toEqual([
      'runId', 'parentRunId', 'k', 'covariance', 'bic', 'segmentCount', 'segmentation', 'customers', 'tooNew', 'borderline', 'atypical',
      'segments', 'stability', 'review', 'warnings',
    ]);
    expect(summary).toMatchObject({ runId: 1, parentRunId: null, k: 4, covariance: 'diag', segmentation: 'auto', stability: null });
    expect(summary.segmentCount).toBe(summary.segments.length);
    expect(Object.keys(summary.segments[0])).toEqual(['name', 'key', 'components', 'customers', 'share', 'revenueShare']);
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
    expect(rescore.stdout).toMatch(/^Run 3 \(parent 1\): k = 4 diag components combined into \d+ segments? \(where the entropy curve flattens\)/);
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

  it('segments: the combining tree, a level, a merge and a split, through the same API calls', async () => {
    const tree = JSON.parse((await cli('segments', '--db', demo.path, '--run', '2', 'tree', '--json')).stdout);
    expect(tree).toMatchObject({ runId: 2, components: expect.any(Number), levels: expect.any(Array) });
    expect(tree.levels).toHaveLength(tree.components);
    const level = await cli('segments', '--db', demo.path, '--run', '2', 'level', String(tree.components), '--json');
    expect(level.code, level.stderr).toBe(0);
    const regrouped = JSON.parse(level.stdout);
    expect(regrouped.summary).toMatchObject({ segmentCount: tree.components, segmentation: 'level' });
    const [a, b] = regrouped.summary.segments;
    const merged = await cli('segments', '--db', demo.path, '--run', '2', 'merge', a.key, b.key);
    expect(merged.code, merged.stderr).toBe(0);
    expect(merged.stdout).toMatch(new RegExp(`^Run 2: merged "${a.name}" and "${b.name}"; now ${tree.components - 1} segments?`));
    // The merged segment keeps the key of whichever of the two it continues (the one with more customers).
    const both = [...a.components, ...b.components].sort((x: number, y: number) => x - y).join(',');
    const listed = JSON.parse((await cli('segments', '--db', demo.path, '--run', '2', 'list', '--json')).stdout);
    const mergedSegment = listed.segments.find((segment: { components: number[] }) => segment.components.join(',') === both);
    expect([a.key, b.key]).toContain(mergedSegment.key);
    const parts = [a.components, b.components].map((group: number[]) => group.join(',')).join(';');
    const split = await cli('segments', '--db', demo.path, '--run', '2', 'split', mergedSegment.key, '--parts', parts, '--json');
    expect(split.code, split.stderr).toBe(0);
    expect(JSON.parse(split.stdout).summary.segmentCount).toBe(tree.components);
    const itself = await cli('segments', '--db', demo.path, '--run', '2', 'merge', a.key, a.key);
    expect(itself.code).toBe(2);
    expect(itself.stderr).toMatch(/^spendmix: Cannot merge segment \d+ with itself/);
    const tooMany = await cli('segments', '--db', demo.path, '--run', '2', 'level', String(tree.components + 1));
    expect(tooMany.code).toBe(2);
    expect(tooMany.stderr).toMatch(/components/);
  });

  it('review: the queue at a capacity, the rest on request, and accept-rest', async () => {
    const month = await cli('refresh', '--db', demo.path, '--as-of', '2026-11-30', '--k', '4', '--covariance', 'diag', '--restarts', '1', '--segment-count', '4', '--review-capacity', '3', '--borderline-confidence', '0.95', '--json');
    expect(month.code, month.stderr).toBe(0);
    const runId = String(JSON.parse(month.stdout).runId);
    const queue = JSON.parse((await cli('review', '--db', demo.path, '--run', runId, 'list', '--json')).stdout);
    expect(queue.total).toBe(3);
    expect(queue.queue).toMatchObject({ capacity: 3, queued: 3 });
    const rest = JSON.parse((await cli('review', '--db', demo.path, '--run', runId, 'list', '--scope', 'unqueued', '--limit', '500', '--json')).stdout);
    expect(rest.total).toBe(queue.queue.flagged - 3);
    expect(rest.total).toBeGreaterThan(0);
    const human = await cli('review', '--db', demo.path, '--run', runId, 'list');
    expect(human.stdout).toContain(`queue: 3 of ${queue.queue.flagged} flagged (capacity 3); ${rest.total} counted, not queued (`);
    const accepted = await cli('review', '--db', demo.path, '--run', runId, 'accept-rest', '--reviewer', 'tester', '--json');
    expect(accepted.code, accepted.stderr).toBe(0);
    expect(JSON.parse(accepted.stdout)).toMatchObject({ accepted: rest.total, alreadyDecided: 0 });
    const again = await cli('review', '--db', demo.path, '--run', runId, 'accept-rest');
    expect(again.stdout).toMatch(new RegExp(`kept the model's segment for 0 flagged customers beyond the capacity \\(${rest.total} already had a decision`));
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
    expect(JSON.parse((await cli('runs', '--db', demo.path, '--json')).stdout).runs).toHaveLength(4);
  });
});
