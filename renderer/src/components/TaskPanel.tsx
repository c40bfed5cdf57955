import type { TaskView } from '../lib/task-state.js';
import { progressFraction } from '../lib/task-state.js';
import type { Formatters } from '../lib/format.js';

interface TaskPanelProps<R> {
  view: TaskView<R>;
  title: string;
  testId: string;
  format: Formatters;
  onCancel: () => void;
  onDismiss: () => void;
  /** What to say when the task has finished. */
  describeResult: (result: R) => React.ReactNode;
}

/** Progress bar with a cancel button for a long task, then its outcome. */
export function TaskPanel<R>({ view, title, testId, format, onCancel, onDismiss, describeResult }: TaskPanelProps<R>) {
  if (view.state === 'idle') return null;
  if (view.state === 'starting' || view.state === 'running') {
    const progress = view.state === 'running' ? view.progress : null;
    const fraction = progressFraction(progress);
    const cancelling = view.state === 'running' && view.cancelling;
    return (
      <section className="task task-running" data-testid={testId} aria-live="polite" aria-busy="true">
        <div className="task-head">
          <strong>{title}</strong>
          <span className="task-phase" data-testid={`${testId}-phase`}>
            {progress ? progress.phase : 'starting…'}
          </span>
        </div>
        <div
          className={fraction === null ? 'progress progress-indeterminate' : 'progress'}
          role="progressbar"
          aria-valuemin={0}
          aria-valuemax={100}
          aria-valuenow={fraction === null ? undefined : Math.round(fraction * 100)}
          data-testid={`${testId}-bar`}
        >
          <div className="progress-fill" style={fraction === null ? undefined : { width: `${fraction * 100}%` }} />
        </div>
        <div className="task-foot">
          <span>
            {progress?.message}
            {progress && progress.total !== null
              ? ` (${format.count(progress.done)} of ${format.count(progress.total)})`
              : ''}
          </span>
          <button type="button" className="button-quiet" onClick={onCancel} disabled={cancelling || view.state === 'starting'} data-testid={`${testId}-cancel`}>
            {cancelling ? 'Cancelling…' : 'Cancel'}
          </button>
        </div>
      </section>
    );
  }
  const outcome =
    view.state === 'done' ? (
      <div className="task-outcome">{describeResult(view.result)}</div>
    ) : view.state === 'cancelled' ? (
      <div className="task-outcome">Cancelled. Nothing was changed.</div>
    ) : (
      <div className="task-outcome" role="alert">
        <strong>{view.error.kind === 'input' ? 'Please check: ' : 'Failed: '}</strong>
        {view.error.message}
        {view.error.issues?.length ? (
          <ul>
            {view.error.issues.map((issue) => (
              <li key={issue.path + issue.message}>
                {issue.path ? `${issue.path}: ` : ''}
                {issue.message}
              </li>
            ))}
          </ul>
        ) : null}
      </div>
    );
  return (
    <section className={`task task-${view.state}`} data-testid={testId} data-state={view.state}>
      <div className="task-head">
        <strong>{title}</strong>
        <button type="button" className="button-quiet" onClick={onDismiss} data-testid={`${testId}-dismiss`}>
          Dismiss
        </button>
      </div>
      {outcome}
    </section>
  );
}
