import { mkdtempSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { toApiError } from '../../src/api/api-errors.js';
import type { ApiError, TaskStarted } from '../../src/api/contract.js';
import { callApi } from '../../src/api/handlers.js';
import { runLongTask } from '../../src/api/long-tasks.js';
import { ApiSession } from '../../src/api/session.js';
import { demoDatabase, type DemoDatabase } from '../runs/demo-database.js';
import { cli } from '../support/run-cli.js';

/**
 * The command line and the app refuse the same bad input with the same words (DESIGN.md §2: one
 * handler, one validation, one set of limits): each case below is one mistake made on both
 * surfaces, as flags to the CLI (run in-process) and as the app's API call on a session of its
 * own. The CLI prints exactly the API's message after "spendmix: " and exits 2; the API answers
 * with an error of kind "input".
 */
let demo: DemoDatabase;
let session: ApiSession;
let queued: string;
let segmentKey: string;

/** The app's answer to one call: for a long task, how it ended. */
async function appRefusal(method: string, input: unknown): Promise<ApiError> {
  try {
    const answer = await callApi(session, method, input);
    if (answer && typeof answer === 'object' && 'taskId' in answer) await session.tasks.wait(answer as TaskStarted);
  } catch (error) {
    return toApiError(error);
  }
  throw new Error(`${method} accepted ${JSON.stringify(input)}`);
}

beforeAll(async () => {
  demo = await demoDatabase('sample');
  session = new ApiSession({ dbPath: demo.path, shell: 'browser', runLongTask });
  const started = (await callApi(session, 'startRun', { asOf: '2026-11-30', k: 3, covariance: 'diag', restarts: 1 })) as TaskStarted<'startRun'>;
  const run = await session.tasks.wait(started);
  expect(run.runId).toBe(1);
  const queue = (await callApi(session, 'reviewQueue', { runId: 1, limit: 1 })) as { rows: { customerId: string }[] };
  queued = queue.rows[0].customerId;
  segmentKey = ((await callApi(session, 'segments', { runId: 1 })) as { segments: { key: string }[] }).segments[0].key;
});

afterAll(async () => {
  await session?.close();
  demo?.close();
});

const asOf = '2026-11-30';
const out = join(mkdtempSync(join(tmpdir(), 'spendmix-refusals-')), 'list.xlsx');

const cases: { name: string; flags: () => string[]; method: string; input: () => unknown; words: RegExp }[] = [
  { name: 'a window of 61 months', flags: () => ['refresh', '--as-of', asOf, '--window-months', '61'], method: 'startRun', input: () => ({ asOf, windowMonths: 61 }), words: /the window in months \(windowMonths, --window-months\) must be at most 60 \(got 61\)/ },
  { name: 'k = 21', flags: () => ['refresh', '--as-of', asOf, '--k', '21'], method: 'startRun', input: () => ({ asOf, k: 21 }), words: /\(k, --k\) must be at most 20 \(got 21\)/ },
  { name: 'k that is no number', flags: () => ['refresh', '--as-of', asOf, '--k', 'many'], method: 'startRun', input: () => ({ asOf, k: 'many' }), words: /\(k, --k\) must be a number or "auto" \(got "many"\)/ },
  { name: '51 restarts', flags: () => ['refresh', '--as-of', asOf, '--restarts', '51'], method: 'startRun', input: () => ({ asOf, restarts: 51 }), words: /\(restarts, --restarts\) must be at most 50 \(got 51\)/ },
  { name: 'a borderline confidence of 1.5', flags: () => ['refresh', '--as-of', asOf, '--borderline-confidence', '1.5'], method: 'startRun', input: () => ({ asOf, borderlineConfidence: 1.5 }), words: /\(borderlineConfidence, --borderline-confidence\) must be at most 1 \(got 1.5\)/ },
  { name: 'a reversed k range', flags: () => ['refresh', '--as-of', asOf, '--k-min', '6', '--k-max', '3'], method: 'startRun', input: () => ({ asOf, kMin: 6, kMax: 3 }), words: /\(kMin, --k-min\) must not exceed kMax \(--k-max\)/ },
  { name: 'a date that is not in the calendar', flags: () => ['refresh', '--as-of', '2026-02-30'], method: 'startRun', input: () => ({ asOf: '2026-02-30' }), words: /\(asOf, --as-of\) is not a calendar date \(got "2026-02-30"\)/ },
  { name: 'a date written day first', flags: () => ['refresh', '--as-of', '30/11/2026'], method: 'startRun', input: () => ({ asOf: '30/11/2026' }), words: /\(asOf, --as-of\) must be a date written YYYY-MM-DD/ },
  { name: 'no as-of date', flags: () => ['refresh'], method: 'startRun', input: () => ({}), words: /the last day of the window \(asOf, --as-of\) is required/ },
  { name: 'an unknown mode', flags: () => ['refresh', '--as-of', asOf, '--mode', 'redo'], method: 'startRun', input: () => ({ asOf, mode: 'redo' }), words: /\(mode, --mode\) must be one of refit, rescore \(got "redo"\)/ },
  { name: 'a fit sample of 0', flags: () => ['refresh', '--as-of', asOf, '--fit-sample', '0'], method: 'startRun', input: () => ({ asOf, fitSample: 0 }), words: /\(fitSample, --fit-sample\) must be at least 1 \(got 0\)/ },
  {
    name: 'a fit sample too small for the k range',
    flags: () => ['refresh', '--as-of', asOf, '--fit-sample', '6'],
    method: 'startRun',
    input: () => ({ asOf, fitSample: 6 }),
    words: /^k = 8 is too large for a fit sample of 6 customers; the sample allows at most k = 5\. Raise the fit sample \(--fit-sample, or none to fit on all placed customers\)/,
  },
  { name: 'an unknown feature', flags: () => ['refresh', '--as-of', asOf, '--features', 'shoe_size'], method: 'startRun', input: () => ({ asOf, features: [{ feature: 'shoe_size' }] }), words: /Unknown feature shoe_size; available: / },
  { name: 'a parent run that does not exist', flags: () => ['refresh', '--as-of', asOf, '--parent', '999'], method: 'startRun', input: () => ({ asOf, parentRunId: 999 }), words: /no run 999 to use as the parent/ },
  { name: 'an as-of date outside the data', flags: () => ['refresh', '--as-of', '2030-01-31'], method: 'startRun', input: () => ({ asOf: '2030-01-31' }), words: /outside the data/ },
  {
    name: 'a note with a control character',
    flags: () => ['review', '--run', '1', 'decide', '--customer', queued, '--action', 'keep', '--note', 'checked\u0007'],
    method: 'decideReview',
    input: () => ({ runId: 1, customerId: queued, action: 'keep', note: 'checked\u0007', reviewer: process.env.USER ?? '' }),
    words: /a note kept with the decision \(note, --note\) may hold line breaks and tabs but no other control characters \(found U\+0007 at character 8\)/,
  },
  {
    name: 'a reviewer name with an escape sequence',
    flags: () => ['review', '--run', '1', 'decide', '--customer', queued, '--action', 'keep', '--reviewer', 'ana\u001b[31m'],
    method: 'decideReview',
    input: () => ({ runId: 1, customerId: queued, action: 'keep', reviewer: 'ana\u001b[31m' }),
    words: /who decided \(reviewer, --reviewer\) must not contain control characters such as line breaks, tabs or escapes \(found U\+001B at character 4\)/,
  },
  {
    name: 'a segment name with a line break',
    flags: () => ['segments', '--run', '1', 'rename', '--segment', segmentKey, '--name', 'Weekly\nshop'],
    method: 'renameSegment',
    input: () => ({ runId: 1, segment: segmentKey, name: 'Weekly\nshop' }),
    words: /the new name \(name, --name\) must not contain control characters such as line breaks, tabs or escapes \(found U\+000A at character 7\)/,
  },
  { name: 'a run id that is no number', flags: () => ['segments', '--run', 'first', 'list'], method: 'segments', input: () => ({ runId: 'first' }), words: /the run \(runId, --run\) must be a number \(got "first"\)/ },
  { name: 'a run that does not exist', flags: () => ['review', '--run', '42', 'list'], method: 'reviewQueue', input: () => ({ runId: 42 }), words: /There is no run 42; runs in this database: 1\./ },
  {
    name: 'a minimum confidence of 2',
    flags: () => ['export', '--run', '1', '--out', out, '--min-confidence', '2'],
    method: 'exportRun',
    input: () => ({ runId: 1, out, minConfidence: 2 }),
    words: /\(minConfidence, --min-confidence\) must be at most 1 \(got 2\)/,
  },
];

describe('the CLI and the app refuse the same bad input with the same words', () => {
  for (const { name, flags, method, input, words } of cases) {
    it(name, async () => {
      const app = await appRefusal(method, input());
      expect(app.kind).toBe('input');
      expect(app.message).toMatch(words);
      for (const json of [[], ['--json']]) {
        const [command, ...rest] = flags();
        const run = await cli(command, '--db', demo.path, ...rest, ...json);
        expect(run.code, run.stderr).toBe(2);
        expect(run.stdout).toBe('');
        expect(run.stderr.split('\n')[0]).toBe(`spendmix: ${app.message}`);
      }
    });
  }

  it('and nothing was stored by any of them', async () => {
    expect(((await callApi(session, 'listRuns', {})) as unknown[]).length).toBe(1);
    expect(demo.db.prepare('SELECT count(*) FROM review_decisions').pluck().get()).toBe(0);
    expect(((await callApi(session, 'segments', { runId: 1 })) as { segments: { name: string }[] }).segments.map((segment) => segment.name)).not.toContain('Weekly\nshop');
  });
});
