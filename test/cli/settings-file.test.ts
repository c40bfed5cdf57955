import { readFileSync, writeFileSync } from 'node:fs';
import { join } from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { startRunInput } from '../../src/api/contract.js';
import { demoDatabase, type DemoDatabase } from '../runs/demo-database.js';
import { cli } from '../support/run-cli.js';

/**
 * `runs --run ID --settings-out F.json` writes everything a run was computed from; `refresh
 * --settings F.json` takes it back (flags override it), validated by the same schema as the
 * Model screen's settings, so a month can be repeated exactly.
 */
let demo: DemoDatabase;

beforeAll(async () => {
  demo = await demoDatabase('sample');
});
afterAll(() => demo?.close());

function labels(runId: number): [string, number | null][] {
  return demo.db.prepare('SELECT customer_id, segment_index FROM run_memberships WHERE run_id = ? ORDER BY customer_id').raw().all(runId) as [string, number | null][];
}

describe('run settings as a file', () => {
  it('repeats a month exactly: two runs from the same settings file give identical memberships', async () => {
    const first = await cli(
      'refresh', '--db', demo.path, '--as-of', '2026-10-31', '--k', 'auto', '--k-min', '2', '--k-max', '3', '--covariance', 'diag', '--restarts', '2',
      '--seed', '17', '--features', 'spend_per_month,visits_per_month,fresh_share', '--transform', 'fresh_share=clip=:99,z', '--transform', 'visits_per_month=cbrt,z', '--tol', '0.0001',
      '--init', 'kmeans++', '--review-movers-below', '0.9', '--json',
    );
    expect(first.code, first.stderr).toBe(0);
    const runId = JSON.parse(first.stdout).runId as number;
    const file = join(demo.folder, 'october.json');
    const written = await cli('runs', '--db', demo.path, '--run', String(runId), '--settings-out', file, '--json');
    expect(written.code, written.stderr).toBe(0);
    expect(JSON.parse(written.stdout)).toEqual({ runId, settingsOut: file });
    const settings = JSON.parse(readFileSync(file, 'utf8'));
    // The file is a complete startRun input: the schema takes it as it is and adds nothing.
    expect(startRunInput.parse(settings)).toEqual(settings);
    expect(settings).toMatchObject({
      asOf: '2026-10-31', parentRunId: null, source: 'receipts', k: 'auto', kMin: 2, kMax: 3, covariance: 'diag', seed: 17, tol: 0.0001, init: 'kmeans++',
      reviewMoversBelowConfidence: 0.9,
      features: [
        { feature: 'spend_per_month', log1p: true, zScore: true },
        { feature: 'visits_per_month', log1p: false, cubeRoot: true, zScore: true },
        { feature: 'fresh_share', log1p: false, clipLowerPercentile: null, clipUpperPercentile: 99, zScore: true },
      ],
    });

    const again = [];
    for (let i = 0; i < 2; i++) {
      const run = await cli('refresh', '--db', demo.path, '--settings', file, '--json');
      expect(run.code, run.stderr).toBe(0);
      again.push(JSON.parse(run.stdout));
    }
    expect(again[0]).toMatchObject({ parentRunId: null, k: JSON.parse(first.stdout).k, bic: JSON.parse(first.stdout).bic });
    expect(labels(again[0].runId)).toEqual(labels(again[1].runId));
    expect(labels(again[0].runId)).toEqual(labels(runId));
    // The same segments, names and components; each run is a first run, so each takes keys never used before.
    const withoutKeys = (segments: { key: string }[]) => segments.map(({ key: _key, ...segment }) => segment);
    expect(withoutKeys(again[1].segments)).toEqual(withoutKeys(again[0].segments));
    expect(again[1].segments.map((segment: { key: string }) => segment.key)).not.toEqual(again[0].segments.map((segment: { key: string }) => segment.key));

    // Flags given with the file override it.
    const changed = await cli('refresh', '--db', demo.path, '--settings', file, '--k', '2', '--covariance', 'spherical', '--json');
    expect(changed.code, changed.stderr).toBe(0);
    expect(JSON.parse(changed.stdout)).toMatchObject({ k: 2, covariance: 'spherical' });
  });

  it('refuses a bad file naming the file and the field, and a bad flag over a good file in the usual words', async () => {
    const file = join(demo.folder, 'bad.json');
    writeFileSync(file, JSON.stringify({ asOf: '2026-10-31', windowMonths: 61, kMax: 3 }));
    const bad = await cli('refresh', '--db', demo.path, '--settings', file);
    expect(bad.code).toBe(2);
    expect(bad.stderr).toBe(`spendmix: the settings file ${file}: invalid input — the window in months (windowMonths, --window-months) must be at most 60 (got 61).\n`);
    const overridden = await cli('refresh', '--db', demo.path, '--settings', file, '--window-months', '12', '--k-max', '30');
    expect(overridden.code).toBe(2);
    expect(overridden.stderr).toMatch(/^spendmix: startRun: invalid input — largest k tried with k auto \(kMax, --k-max\) must be at most 20 \(got 30\)\.\n/);
    writeFileSync(file, JSON.stringify({ asOf: '2026-10-31', colour: 'blue' }));
    expect((await cli('refresh', '--db', demo.path, '--settings', file)).stderr).toMatch(/the settings file .*bad\.json: invalid input — unknown field "colour"/);
    writeFileSync(file, '{"asOf": "2026-10-31",');
    expect((await cli('refresh', '--db', demo.path, '--settings', file)).stderr).toMatch(/The settings file .*bad\.json is not JSON/);
    writeFileSync(file, '[1, 2]');
    expect((await cli('refresh', '--db', demo.path, '--settings', file)).stderr).toMatch(/must hold one JSON object of run settings/);
    expect((await cli('refresh', '--db', demo.path, '--settings', join(demo.folder, 'absent.json'))).stderr).toMatch(/Cannot read the settings file/);
    expect((await cli('runs', '--db', demo.path, '--settings-out', file)).stderr).toMatch(/--settings-out needs --run ID/);
  });
});
