import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { toApiError } from '../../src/api/api-errors.js';
import type { ReviewItem, TaskStarted } from '../../src/api/contract.js';
import { callApi } from '../../src/api/handlers.js';
import { runLongTask } from '../../src/api/long-tasks.js';
import { ApiSession } from '../../src/api/session.js';
import { cli } from '../support/run-cli.js';
import { demoDatabase, type DemoDatabase } from './demo-database.js';

/**
 * Who may get a review decision (DESIGN.md §7): the customers the run flags for review (in the
 * capacity-limited queue or counted beyond it), and only they, whether the decision comes from the Review screen (the API) or from `review decide`; a
 * refused decision stores nothing, so it can never change an export behind the analyst's back.
 */
let demo: DemoDatabase;
let session: ApiSession;
let placedNotFlagged: string;
let tooNew: string;
let queued: ReviewItem;
let beyondCapacity: ReviewItem;

const decisionsOf = (customerId: string) =>
  demo.db.prepare('SELECT count(*) FROM review_decisions WHERE run_id = 1 AND customer_id = ?').pluck().get(customerId) as number;

beforeAll(async () => {
  demo = await demoDatabase('sample');
  session = new ApiSession({ dbPath: demo.path, shell: 'browser', runLongTask });
  await session.tasks.wait((await callApi(session, 'startRun', { asOf: '2026-11-30', k: 3, covariance: 'diag', restarts: 1, reviewCapacity: 2 })) as TaskStarted<'startRun'>);
  placedNotFlagged = demo.db.prepare('SELECT customer_id FROM run_memberships WHERE run_id = 1 AND review = 0 AND segment_index IS NOT NULL LIMIT 1').pluck().get() as string;
  tooNew = demo.db.prepare('SELECT customer_id FROM run_memberships WHERE run_id = 1 AND too_new = 1 LIMIT 1').pluck().get() as string;
  queued = ((await callApi(session, 'reviewQueue', { runId: 1, limit: 1 })) as { rows: ReviewItem[] }).rows[0];
  beyondCapacity = ((await callApi(session, 'reviewQueue', { runId: 1, limit: 1, scope: 'unqueued' })) as { rows: ReviewItem[] }).rows[0];
  expect([placedNotFlagged, tooNew, queued.customerId, beyondCapacity.customerId].every(Boolean)).toBe(true);
});

afterAll(async () => {
  await session?.close();
  demo?.close();
});

describe('review decisions: flagged customers only, one rule for the app and the CLI', () => {
  for (const action of ['exclude', 'keep', 'move'] as const) {
    it(`the app refuses to ${action} a placed customer who is not flagged, and stores nothing`, async () => {
      const input = { runId: 1, customerId: placedNotFlagged, action, ...(action === 'move' ? { segment: 0 } : {}) };
      const refusal = await callApi(session, 'decideReview', input).then(
        () => null,
        (error: unknown) => toApiError(error),
      );
      expect(refusal).toMatchObject({ kind: 'input', message: expect.stringMatching(/is not flagged for review in run 1.*nothing was stored/) });
      expect(decisionsOf(placedNotFlagged)).toBe(0);
    });
  }

  it('the CLI refuses the same call with the same words and exit code 2, and stores nothing', async () => {
    const app = await callApi(session, 'decideReview', { runId: 1, customerId: placedNotFlagged, action: 'exclude' }).catch(toApiError);
    for (const json of [[], ['--json']]) {
      const run = await cli('review', '--db', demo.path, '--run', '1', 'decide', '--customer', placedNotFlagged, '--action', 'exclude', ...json);
      expect(run.code).toBe(2);
      expect(run.stdout).toBe('');
      expect(run.stderr.split('\n')[0]).toBe(`spendmix: ${(app as { message: string }).message}`);
    }
    expect(decisionsOf(placedNotFlagged)).toBe(0);
  });

  it('too-new customers and strangers are refused too', async () => {
    for (const customerId of [tooNew, 'NOBODY']) {
      const run = await cli('review', '--db', demo.path, '--run', '1', 'decide', '--customer', customerId, '--action', 'exclude');
      expect(run.code).toBe(2);
      expect(run.stderr).toMatch(customerId === 'NOBODY' ? /is not part of run 1; nothing was stored/ : /is not flagged for review in run 1/);
    }
    expect(demo.db.prepare('SELECT count(*) FROM review_decisions').pluck().get()).toBe(0);
  });

  it('a queued customer gets the decision, on either surface', async () => {
    const decided = (await callApi(session, 'decideReview', { runId: 1, customerId: queued.customerId, action: 'keep', note: 'checked\nby hand' })) as ReviewItem;
    expect(decided.decision).toMatchObject({ action: 'keep', note: 'checked\nby hand', segmentName: queued.segmentName });
    const run = await cli('review', '--db', demo.path, '--run', 'latest', 'decide', '--customer', queued.customerId, '--action', 'exclude', '--json');
    expect(run.code).toBe(0);
    expect(JSON.parse(run.stdout)).toMatchObject({ runId: 1, customerId: queued.customerId, decision: { action: 'exclude' } });
    expect(decisionsOf(queued.customerId)).toBe(1);
  });

  it('a flagged customer counted beyond the capacity gets the decision too', async () => {
    expect(beyondCapacity.queued).toBe(false);
    const decided = (await callApi(session, 'decideReview', { runId: 1, customerId: beyondCapacity.customerId, action: 'exclude' })) as ReviewItem;
    expect(decided.decision).toMatchObject({ action: 'exclude' });
    expect(decisionsOf(beyondCapacity.customerId)).toBe(1);
  });
});
