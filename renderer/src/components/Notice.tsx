import type { ApiError } from '../../../src/api/contract.js';

/** A failed request, said plainly, with a way to try again. */
export function ErrorNote({ error, onRetry }: { error: ApiError; onRetry?: () => void }) {
  return (
    <div className="note note-error" role="alert" data-testid="error-note">
      <strong>{error.kind === 'input' ? 'Please check: ' : 'Something went wrong: '}</strong>
      {error.message}
      {onRetry ? (
        <button type="button" className="button-quiet" onClick={onRetry}>
          Try again
        </button>
      ) : null}
    </div>
  );
}

export function Loading({ what }: { what: string }) {
  return (
    <div className="note note-loading" aria-live="polite">
      Loading {what}…
    </div>
  );
}

export function EmptyState({ title, children, testId }: { title: string; children?: React.ReactNode; testId?: string }) {
  return (
    <div className="empty" data-testid={testId}>
      <h3>{title}</h3>
      {children}
    </div>
  );
}
