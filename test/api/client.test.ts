import { describe, expect, it, vi } from 'vitest';
import type { CallOutcome, SpendmixShell, TaskEvent } from '../../src/api/contract.js';
import { ApiCallError } from '../../renderer/src/api-client/api-call-error.js';
import { buildClient, type Transport } from '../../renderer/src/api-client/build-client.js';

/** A transport played by plain functions, so the client's own logic is tested without a host. */
function fakeTransport(answers: Record<string, CallOutcome>) {
  const listeners = new Set<(event: TaskEvent) => void>();
  const call = vi.fn(async (method: string) => answers[method] ?? { ok: false as const, error: { kind: 'input' as const, message: `no ${method}` } });
  const transport: Transport = {
    call,
    subscribe: (listener) => {
      listeners.add(listener);
      return () => listeners.delete(listener);
    },
    shell: { kind: 'browser' } as SpendmixShell,
  };
  return { transport, call, emit: (event: TaskEvent) => listeners.forEach((listener) => listener(event)) };
}

describe('the screens\' API client (renderer/src/api-client)', () => {
  it('turns each method into one call and a failed outcome into an ApiCallError with its fields', async () => {
    const fake = fakeTransport({
      databaseInfo: { ok: true, value: { customers: 3 } },
      startRun: { ok: false, error: { kind: 'input', message: 'startRun: invalid input — asOf: bad', issues: [{ path: 'asOf', message: 'bad' }] } },
    });
    const client = buildClient(fake.transport);
    expect(await client.api.databaseInfo({})).toEqual({ customers: 3 });
    expect(fake.call).toHaveBeenCalledWith('databaseInfo', {});
    const error = await client.api.startRun({ asOf: 'x' }).catch((caught: unknown) => caught);
    expect(error).toBeInstanceOf(ApiCallError);
    expect(error).toMatchObject({ kind: 'input', issues: [{ path: 'asOf', message: 'bad' }] });
  });

  it('waits for a task: progress to the caller, then the result; failure and cancel reject', async () => {
    const fake = fakeTransport({ taskStatus: { ok: true, value: { state: 'running', progress: null } } });
    const client = buildClient(fake.transport);
    const progress = vi.fn();
    const done = client.waitForTask({ taskId: 't1', method: 'exportRun' }, progress);
    fake.emit({ type: 'progress', taskId: 'other', phase: 'x', done: 0, total: null, message: '' });
    fake.emit({ type: 'progress', taskId: 't1', phase: 'customers', done: 5, total: 10, message: 'half' });
    fake.emit({ type: 'done', taskId: 't1', method: 'exportRun', result: { customersExported: 7 } });
    expect(await done).toEqual({ customersExported: 7 });
    expect(progress).toHaveBeenCalledTimes(1);

    const failed = client.waitForTask({ taskId: 't2', method: 'importFile' });
    fake.emit({ type: 'failed', taskId: 't2', method: 'importFile', error: { kind: 'input', message: 'too many rejected rows' } });
    await expect(failed).rejects.toMatchObject({ kind: 'input', message: 'too many rejected rows' });
    const cancelled = client.waitForTask({ taskId: 't3', method: 'startRun' });
    fake.emit({ type: 'cancelled', taskId: 't3', method: 'startRun' });
    await expect(cancelled).rejects.toMatchObject({ kind: 'cancelled' });
  });

  it('settles at once for a task that finished before anyone waited, or by asking its status', async () => {
    const fake = fakeTransport({
      taskStatus: { ok: true, value: { taskId: 't5', method: 'loadDemo', state: 'done', result: { customers: 1500 }, error: null, progress: null } },
    });
    const client = buildClient(fake.transport);
    fake.emit({ type: 'done', taskId: 't4', method: 'loadDemo', result: { customers: 50 } });
    expect(await client.waitForTask({ taskId: 't4', method: 'loadDemo' })).toEqual({ customers: 50 });
    // No event seen (the stream reconnected after the end): the stored status answers.
    expect(await client.waitForTask({ taskId: 't5', method: 'loadDemo' })).toEqual({ customers: 1500 });
  });
});
