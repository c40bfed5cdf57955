import type { ApiInput, RegroupResult } from '../../../src/api/contract.js';
import { TaskPanel } from '../components/TaskPanel.js';
import { capitalise, countOf, type Formatters } from '../lib/format.js';
import { useApi, useTask } from './client-context.js';
import { useWorkspace } from './workspace.js';

export type SegmentationChangeInput = ApiInput<'regroupSegments'>['change'];

/**
 * Changes a stored run's segmentation (a level, a merge, a split): one long task in the core,
 * with progress and cancel. When it ends, the run's segments and the run list are read again;
 * `onDone` lets a screen re-read what it shows of the run.
 */
export function useRegroup(runId: number, onDone?: (result: RegroupResult) => void) {
  const api = useApi();
  const { refreshSegments, refreshDatabase } = useWorkspace();
  const task = useTask<'regroupSegments'>((result) => {
    refreshSegments();
    refreshDatabase();
    onDone?.(result);
  });
  const running = task.view.state === 'running' || task.view.state === 'starting';
  const regroup = (change: SegmentationChangeInput) => task.start(() => api.regroupSegments({ runId, change }));
  return { ...task, running, regroup };
}

/** The regroup's progress bar and cancel button, then what it did (test id regroup-task, regroup-result). */
export function RegroupPanel({ regroup, format }: { regroup: ReturnType<typeof useRegroup>; format: Formatters }) {
  return (
    <TaskPanel<RegroupResult>
      view={regroup.view}
      title="Regrouping the segments"
      testId="regroup-task"
      format={format}
      onCancel={regroup.cancel}
      onDismiss={regroup.dismiss}
      describeResult={(result) => (
        <div data-testid="regroup-result">
          <p>
            {capitalise(result.change)}: now {countOf(result.summary.segmentCount, 'segment', format)} from {countOf(result.summary.k, 'component', format)}; {format.count(result.summary.borderline)} borderline, {format.count(result.summary.review.queued)} in the
            review queue.
          </p>
          {result.added.length ? <p>New: {result.added.join(', ')}.</p> : null}
          {result.returned.length ? <p>Back with their earlier key and name: {result.returned.join(', ')}.</p> : null}
          {result.retired.length ? <p>No longer there: {result.retired.join(', ')}.</p> : null}
          {result.laterRunsUpdated.length ? <p>Movement of later runs recomputed: {result.laterRunsUpdated.map((id) => `#${id}`).join(', ')}.</p> : null}
        </div>
      )}
    />
  );
}
