import { afterEach, beforeEach, describe, expect, it, vi } from 'vitest';
import type { Api } from '../../src/api/contract.js';
import { trackActivity } from '../../renderer/src/lib/api-activity.js';

// Fake timers: the clock only moves when the test says so, so nothing here depends on the machine's speed.
beforeEach(() => vi.useFakeTimers());
afterEach(() => vi.useRealTimers());

const later = (ms: number) => new Promise((resolve) => setTimeout(resolve, ms));

/** An Api whose listRuns answers (or fails) after `delay` ms; other methods are not needed here. */
function slowApi(delay: number, fail = false): Api {
  return { listRuns: () => later(delay).then(() => (fail ? Promise.reject(new Error('no')) : [])) } as unknown as Api;
}

/** Whether the promise has settled by now. */
async function settled(promise: Promise<unknown>): Promise<boolean> {
  let done = false;
  void promise.then(() => (done = true));
  await vi.advanceTimersByTimeAsync(0);
  return done;
}

describe('API activity', () => {
  it('passes calls through with their answers', async () => {
    const { api } = trackActivity(slowApi(5), () => Date.now());
    const answer = api.listRuns({});
    await vi.advanceTimersByTimeAsync(5);
    await expect(answer).resolves.toEqual([]);
  });

  it('waits for the call in flight, then for the quiet spell', async () => {
    const { api, whenQuiet } = trackActivity(slowApi(200), () => Date.now());
    void api.listRuns({});
    const quiet = whenQuiet(50, 5_000);
    await vi.advanceTimersByTimeAsync(199);
    expect(await settled(quiet)).toBe(false);
    await vi.advanceTimersByTimeAsync(30); // answered at 200, quiet only since then
    expect(await settled(quiet)).toBe(false);
    await vi.advanceTimersByTimeAsync(40);
    expect(await settled(quiet)).toBe(true);
  });

  it('gives up waiting after the longest wait', async () => {
    const { api, whenQuiet } = trackActivity(slowApi(10_000), () => Date.now());
    void api.listRuns({});
    const quiet = whenQuiet(50, 300);
    await vi.advanceTimersByTimeAsync(250);
    expect(await settled(quiet)).toBe(false);
    await vi.advanceTimersByTimeAsync(120);
    expect(await settled(quiet)).toBe(true);
  });

  it('counts a failed call as finished', async () => {
    const { api, whenQuiet } = trackActivity(slowApi(20, true), () => Date.now());
    const answer = api.listRuns({}).catch((error: Error) => error.message);
    const quiet = whenQuiet(30, 5_000);
    await vi.advanceTimersByTimeAsync(20);
    expect(await answer).toBe('no');
    await vi.advanceTimersByTimeAsync(40);
    expect(await settled(quiet)).toBe(true);
  });
});
