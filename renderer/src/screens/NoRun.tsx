import { EmptyState } from '../components/Notice.js';
import { useWorkspace } from '../app/workspace.js';

/** Shown by the screens that read a run when there is none yet. */
export function NoRun({ screen }: { screen: string }) {
  const { navigate, database } = useWorkspace();
  const hasData = Boolean(database && database.receipts > 0);
  return (
    <EmptyState title="No run to show yet" testId={`${screen}-no-run`}>
      <p>{hasData ? 'Fit the model once to see segments here.' : 'Import receipts or load the demo chain, then fit the model.'}</p>
      <button type="button" className="button" onClick={() => navigate(hasData ? 'model' : 'sources')}>
        {hasData ? 'Go to Model' : 'Go to Sources'}
      </button>
    </EmptyState>
  );
}

/** A screen that reads a run: its frame with the empty state until a run exists, else `render`. */
export function RunScreen({ screen, title, render }: { screen: string; title: string; render: (runId: number) => React.ReactNode }) {
  const { runId } = useWorkspace();
  if (runId === null) {
    return (
      <section className="screen" data-testid={`screen-${screen}`}>
        <h1>{title}</h1>
        <NoRun screen={screen} />
      </section>
    );
  }
  return <>{render(runId)}</>;
}
