import { describe, expect, it } from 'vitest';
import { CancelledError, InputError, throwIfAborted } from '../../src/errors.js';
import type { TaskEvent } from '../../src/api/contract.js';
import { TaskManager } from '../../src/api/tasks.js';

const exportResult = { out: 'x.xlsx', sheets: ['Overview'], customersExported: 1, suppressedNoConsent: 0 };

/** A task body that waits until released (or aborted), so tests control the order of events. */
function gate() {
  let release: () => void = () => {};
  const released = new Promise<void>((resolve) => {
    release = resolve;
  });
  return { release, released };
}

describe('task manager', () => {
  it('runs tasks one at a time in the order they were started, with progress then the result', async () => {
    const manager = new TaskManager();
    const events: TaskEvent[] = [];
    manager.onEvent((event) => events.push(event));
    const first = gate();
    const order: string[] = [];
    const a = manager.start('exportRun', async ({ onProgress }) => {
      order.push('a start');
      onProgress({ phase: 'writing', done: 1, total: 2, message: 'half' });
      await first.released;
      order.push('a end');
      return exportResult;
    });
    const b = manager.start('exportRun', async () => {
      order.push('b start');
      return exportResult;
    });
    await new Promise((resolve) => setImmediate(resolve));
    expect(manager.status(a.taskId).state).toBe('running');
    expect(manager.status(b.taskId).state).toBe('queued');
    first.release();
    expect(await manager.wait(b)).toEqual(exportResult);
    expect(order).toEqual(['a start', 'a end', 'b start']);
    expect(events.map((event) => `${event.type}:${event.taskId === a.taskId ? 'a' : 'b'}`)).toEqual(['progress:a', 'done:a', 'done:b']);
    expect(manager.status(a.taskId)).toMatchObject({ state: 'done', result: exportResult, progress: { phase: 'writing', done: 1, total: 2 } });
  });

  it('cancels a running task through its signal and a queued one before it starts', async () => {
    const manager = new TaskManager();
    const events: TaskEvent[] = [];
    manager.onEvent((event) => events.push(event));
    let started = false;
    const running = manager.start('startRun', async ({ signal }) => {
      started = true;
      await new Promise<void>((resolve) => signal.addEventListener('abort', () => resolve()));
      throwIfAborted(signal);
      throw new Error('not reached');
    });
    let queuedRan = false;
    const queued = manager.start('exportRun', async () => {
      queuedRan = true;
      return exportResult;
    });
    await new Promise((resolve) => setImmediate(resolve));
    expect(started).toBe(true);
    expect(manager.cancel(queued.taskId)).toEqual({ taskId: queued.taskId, cancelled: true });
    expect(manager.cancel(running.taskId)).toEqual({ taskId: running.taskId, cancelled: true });
    await expect(manager.wait(running)).rejects.toBeInstanceOf(CancelledError);
    await expect(manager.wait(queued)).rejects.toBeInstanceOf(CancelledError);
    expect(queuedRan).toBe(false);
    expect(manager.status(running.taskId).state).toBe('cancelled');
    // Cancelling a finished task says it was not cancelled.
    expect(manager.cancel(running.taskId).cancelled).toBe(false);
    expect(events.filter((event) => event.type === 'cancelled')).toHaveLength(2);
  });

  it('reports a failure with its kind, and keeps serving the next task', async () => {
    const manager = new TaskManager();
    const events: TaskEvent[] = [];
    manager.onEvent((event) => events.push(event));
    const failing = manager.start('importFile', async () => {
      throw new InputError('The receipts file lacks required column amount.');
    });
    await expect(manager.wait(failing)).rejects.toBeInstanceOf(InputError);
    expect(events.at(-1)).toMatchObject({ type: 'failed', method: 'importFile', error: { kind: 'input', message: expect.stringMatching(/amount/) } });
    const next = manager.start('exportRun', async () => exportResult);
    expect(await manager.wait(next)).toEqual(exportResult);
  });

  it('names an unknown task id in a clear input error', () => {
    expect(() => new TaskManager().status('nope')).toThrow(/No task with id "nope"/);
  });

  it('one failing listener does not keep events from the others', async () => {
    const manager = new TaskManager();
    manager.onEvent(() => {
      throw new Error('a closed window');
    });
    const seen: string[] = [];
    manager.onEvent((event) => seen.push(event.type));
    await manager.wait(manager.start('exportRun', async () => exportResult));
    expect(seen).toEqual(['done']);
  });
});
