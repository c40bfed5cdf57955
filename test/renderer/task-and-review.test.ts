import { describe, expect, it } from 'vitest';
import type { TaskProgress } from '../../src/api/contract.js';
import { reviewCommandForKey } from '../../renderer/src/lib/review-keys.js';
import { progressFraction, taskReducer, toApiError, type TaskView } from '../../renderer/src/lib/task-state.js';

const progress = (taskId: string, done: number, total: number | null): TaskProgress => ({ taskId, phase: 'reading', done, total, message: '' });

describe('long task state', () => {
  it('walks start → running → progress → done', () => {
    let view: TaskView<number> = { state: 'idle' };
    view = taskReducer(view, { type: 'start' });
    expect(view.state).toBe('starting');
    view = taskReducer(view, { type: 'started', taskId: 't1' });
    view = taskReducer(view, { type: 'progress', progress: progress('t1', 5, 10) });
    expect(view).toMatchObject({ state: 'running', progress: { done: 5 } });
    view = taskReducer(view, { type: 'cancel-requested' });
    expect(view).toMatchObject({ cancelling: true });
    view = taskReducer(view, { type: 'done', result: 42 });
    expect(view).toEqual({ state: 'done', result: 42 });
  });

  it('ignores progress of another task and events after the end', () => {
    const running = taskReducer<number>({ state: 'starting' }, { type: 'started', taskId: 't1' });
    expect(taskReducer(running, { type: 'progress', progress: progress('t2', 1, 2) })).toBe(running);
    const done: TaskView<number> = { state: 'done', result: 1 };
    expect(taskReducer(done, { type: 'progress', progress: progress('t1', 1, 2) })).toBe(done);
    expect(taskReducer(done, { type: 'failed', error: { kind: 'internal', message: 'late' } })).toBe(done);
    expect(taskReducer(running, { type: 'dismiss' })).toBe(running);
    expect(taskReducer(done, { type: 'dismiss' })).toEqual({ state: 'idle' });
    expect(taskReducer(running, { type: 'start' })).toBe(running);
  });

  it('reports a fraction only when the total is known', () => {
    expect(progressFraction(progress('t', 25, 100))).toBe(0.25);
    expect(progressFraction(progress('t', 150, 100))).toBe(1);
    expect(progressFraction(progress('t', 3, null))).toBeNull();
    expect(progressFraction(null)).toBeNull();
  });

  it('turns whatever a transport rejects with into an ApiError', () => {
    expect(toApiError({ kind: 'input', message: 'bad', issues: [{ path: 'k', message: 'too big' }] })).toEqual({
      kind: 'input',
      message: 'bad',
      issues: [{ path: 'k', message: 'too big' }],
    });
    expect(toApiError(new Error('boom'))).toEqual({ kind: 'internal', message: 'boom', issues: undefined });
    expect(toApiError('plain')).toEqual({ kind: 'internal', message: 'plain' });
    // Details travel on, so a screen can offer the choice an error names (e.g. the text encoding).
    expect(toApiError({ kind: 'input', message: 'not UTF-8', details: { encodingChoices: ['utf-8', 'windows-1252'] } })).toEqual({
      kind: 'input',
      message: 'not UTF-8',
      issues: undefined,
      details: { encodingChoices: ['utf-8', 'windows-1252'] },
    });
  });
});

describe('review keyboard shortcuts', () => {
  const plain = { ctrl: false, meta: false, alt: false, inTextField: false };

  it('maps keys to commands', () => {
    expect(reviewCommandForKey('j', plain, 4)).toEqual({ type: 'next' });
    expect(reviewCommandForKey('ArrowUp', plain, 4)).toEqual({ type: 'previous' });
    expect(reviewCommandForKey('k', plain, 4)).toEqual({ type: 'decide', action: 'keep' });
    expect(reviewCommandForKey('x', plain, 4)).toEqual({ type: 'decide', action: 'exclude' });
    expect(reviewCommandForKey('3', plain, 4)).toEqual({ type: 'decide', action: 'move', segmentNumber: 3 });
    expect(reviewCommandForKey('n', plain, 4)).toEqual({ type: 'focus-note' });
  });

  it('stays out of the way while typing, with modifiers, and for segments that do not exist', () => {
    expect(reviewCommandForKey('k', { ...plain, inTextField: true }, 4)).toBeNull();
    expect(reviewCommandForKey('x', { ...plain, ctrl: true }, 4)).toBeNull();
    expect(reviewCommandForKey('5', plain, 4)).toBeNull();
    expect(reviewCommandForKey('0', plain, 4)).toBeNull();
    expect(reviewCommandForKey('q', plain, 4)).toBeNull();
  });
});
