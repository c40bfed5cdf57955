/*
 * Review screen. Test ids: screen-review, review-progress (text "D of N done"), review-scope,
 * review-filter, queue-summary (see components/QueueSummary.tsx), review-table, review-row-<customer id> (class is-done when decided), review-detail,
 * review-keep, review-move-select, review-move, review-exclude, review-note,
 * review-decision, review-worth, review-why, review-atypical-why, review-shortcuts, review-no-run.
 * Keyboard: see reviewShortcutHelp (↓/j, ↑/p, k, 1–9, x, n).
 */
import { useCallback, useEffect, useRef, useState } from 'react';
import type { QueueCounts, ReviewAction, ReviewItem, ReviewScope } from '../../../src/api/contract.js';
import { useApi, useFormat } from '../app/client-context.js';
import { segmentIndex, useWorkspace } from '../app/workspace.js';
import { ErrorNote } from '../components/Notice.js';
import { QueueSummary } from '../components/QueueSummary.js';
import { SegmentChip } from '../components/SegmentChip.js';
import { VirtualTable, type Column } from '../components/VirtualTable.js';
import { formatInUnit } from '../lib/format.js';
import { reviewCommandForKey, reviewShortcutHelp } from '../lib/review-keys.js';
import { toApiError } from '../lib/task-state.js';
import type { ApiError } from '../../../src/api/contract.js';
import { RunScreen } from './NoRun.js';

const reasonLabel: Record<ReviewItem['reasons'][number], string> = {
  borderline: 'borderline',
  atypical: 'fits no segment well',
  mover: 'uncertain mover',
};

const scopeLabel: Record<ReviewScope, string> = {
  queued: 'the queue',
  unqueued: 'counted, not queued',
  flagged: 'every flagged customer',
};

const actionLabel: Record<ReviewAction, string> = { keep: 'kept', move: 'moved', exclude: 'excluded' };

const reasonsText = (item: ReviewItem) => item.reasons.map((reason) => reasonLabel[reason]).join(', ');
/** The table's narrow column: the reasons' short names (the detail gives them in full). */
const reasonsShort = (item: ReviewItem) => item.reasons.join(', ');

/** "kept", "moved → Tier 2", "excluded", with the note when there is one. */
function decisionText(decision: ReviewItem['decision']): string {
  if (!decision) return '';
  return decision.action === 'move' ? `moved → ${decision.segmentName ?? '?'}` : actionLabel[decision.action];
}

export function ReviewScreen() {
  return <RunScreen screen="review" title="Review" render={(runId) => <ReviewView key={runId} runId={runId} />} />;
}

function ReviewView({ runId }: { runId: number }) {
  const api = useApi();
  const format = useFormat();
  const { segments, refreshSegments, featureUnit } = useWorkspace();
  const { byIndex, ordered, nameOf } = segmentIndex(segments);
  const [status, setStatus] = useState<'all' | 'open' | 'done'>('all');
  const [scope, setScope] = useState<ReviewScope>('queued');
  const [counts, setCounts] = useState<{ total: number; done: number } | null>(null);
  const [queue, setQueue] = useState<QueueCounts | null>(null);
  const [version, setVersion] = useState(0);
  const [selected, setSelected] = useState<number>(0);
  const [current, setCurrent] = useState<ReviewItem | null>(null);
  const [moveTarget, setMoveTarget] = useState<number | null>(null);
  const [note, setNote] = useState('');
  const [failure, setFailure] = useState<ApiError | null>(null);
  const [busy, setBusy] = useState(false);
  const noteBox = useRef<HTMLTextAreaElement>(null);

  const fetchQueue = useCallback(
    (offset: number, limit: number) =>
      api.reviewQueue({ runId, offset, limit, status, scope }).then((page) => {
        setCounts({ total: page.total, done: page.done });
        setQueue(page.queue);
        return page.rows;
      }),
    [api, runId, status, scope],
  );

  useEffect(() => {
    fetchQueue(selected, 1).then(
      (rows) => setCurrent(rows[0] ?? null),
      (error: unknown) => setFailure(toApiError(error)),
    );
    // Re-read the selected item whenever the list is refreshed or the selection moves.
  }, [fetchQueue, selected, version]);

  useEffect(() => {
    setNote(current?.decision?.note ?? '');
    const other = ordered.find((segment) => segment.segment !== current?.segment);
    const movedTo = current?.decision?.action === 'move' ? ordered.find((segment) => segment.name === current.decision?.segmentName) : undefined;
    setMoveTarget(movedTo?.segment ?? current?.secondSegment ?? other?.segment ?? null);
    // Only a new item resets the form; the segment list changing under it must not.
  }, [current]);

  const total = counts?.total ?? 0;

  const decide = useCallback(
    (action: ReviewAction, segment?: number) => {
      if (!current || busy) return;
      setBusy(true);
      api
        .decideReview({ runId, customerId: current.customerId, action, segment: action === 'move' ? segment : undefined, note })
        .then(
          (updated) => {
            setBusy(false);
            setFailure(null);
            setCurrent(updated);
            // Go to the next item; in the "open" view the decided one leaves the list instead.
            if (status !== 'open') setSelected((index) => Math.min(index + 1, Math.max(0, total - 1)));
            setVersion((v) => v + 1);
            refreshSegments();
          },
          (error: unknown) => {
            setBusy(false);
            setFailure(toApiError(error));
          },
        );
    },
    [api, busy, current, note, refreshSegments, runId, selected, status, total],
  );

  useEffect(() => {
    const onKey = (event: KeyboardEvent) => {
      const target = event.target as HTMLElement | null;
      const inTextField = Boolean(target && (target.tagName === 'TEXTAREA' || target.tagName === 'INPUT' || target.tagName === 'SELECT' || target.isContentEditable));
      const command = reviewCommandForKey(
        event.key,
        { ctrl: event.ctrlKey, meta: event.metaKey, alt: event.altKey, inTextField },
        ordered.length,
      );
      if (!command) return;
      event.preventDefault();
      if (command.type === 'next') setSelected((index) => Math.min(index + 1, Math.max(0, total - 1)));
      else if (command.type === 'previous') setSelected((index) => Math.max(0, index - 1));
      else if (command.type === 'focus-note') noteBox.current?.focus();
      else if (command.action === 'move') {
        const target = ordered[(command.segmentNumber ?? 0) - 1];
        if (target) decide('move', target.segment);
      } else decide(command.action);
    };
    window.addEventListener('keydown', onKey);
    return () => window.removeEventListener('keydown', onKey);
  }, [decide, ordered, total]);

  const columns: Column<ReviewItem>[] = [
    { key: 'state', header: '', width: '1.2rem', render: (row) => (row.decision ? <span className="done-mark" aria-label="done">✓</span> : null) },
    { key: 'id', header: 'customer', width: '6.5rem', render: (row) => <code>{row.customerId}</code> },
    { key: 'reason', header: 'reason', width: 'minmax(7rem, 1fr)', render: (row) => <span title={reasonsText(row)}>{reasonsShort(row)}</span> },
    { key: 'stake', header: 'at stake', width: '5.5rem', align: 'right', render: (row) => format.euros(row.revenue) },
    { key: 'worth', header: 'worth', width: '5.5rem', align: 'right', render: (row) => format.eurosPrecise(row.value) },
    { key: 'top', header: 'model says', width: 'minmax(8rem, 1.2fr)', render: (row) => <SegmentChip segment={byIndex.get(row.segment ?? -1)} fallback={row.segmentName ?? '—'} /> },
    { key: 'decision', header: 'decision', width: 'minmax(6rem, 1fr)', render: (row) => decisionText(row.decision) },
  ];

  return (
    <section className="screen" data-testid="screen-review">
      <header className="screen-head">
        <h1>Review</h1>
        <p className="lede">
          Borderline and atypical customers, ordered by what a decision is worth: spend at stake × how unsure the model is. The queue holds as many as
          one person can review this month; a decision changes the customer's final segment.
        </p>
      </header>
      {queue ? (
        <QueueSummary
          runId={runId}
          queue={queue}
          onAccepted={(next) => {
            setQueue(next);
            setVersion((v) => v + 1);
            refreshSegments();
          }}
        />
      ) : null}
      <div className="review-bar">
        <div className="review-progress" data-testid="review-progress" aria-live="polite">
          {counts ? `${format.count(counts.done)} of ${format.count(counts.total)} done` : '…'}
        </div>
        <label>
          list
          <select value={scope} onChange={(e) => { setScope(e.target.value as ReviewScope); setSelected(0); }} data-testid="review-scope">
            {(Object.keys(scopeLabel) as ReviewScope[]).map((entry) => (
              <option key={entry} value={entry}>
                {scopeLabel[entry]}
              </option>
            ))}
          </select>
        </label>
        <label>
          show
          <select value={status} onChange={(e) => { setStatus(e.target.value as typeof status); setSelected(0); }} data-testid="review-filter">
            <option value="all">all</option>
            <option value="open">still open</option>
            <option value="done">done</option>
          </select>
        </label>
      </div>
      {failure ? <ErrorNote error={failure} /> : null}
      <div className="review-layout">
        <div className="panel">
          <VirtualTable
            columns={columns}
            total={total}
            fetchPage={fetchQueue}
            version={`${scope}:${status}:${version}`}
            testId="review-table"
            label="Review queue"
            rowTestId={(row) => `review-row-${row.customerId}`}
            rowClassName={(row) => (row.decision ? 'is-done' : '')}
            selectedIndex={selected}
            onSelect={(index) => setSelected(index)}
            height={520}
          />
        </div>
        <aside className="panel review-detail" data-testid="review-detail">
          {current ? (
            <>
              <h2>
                <code>{current.customerId}</code> <span className="quiet">· {reasonsText(current)}</span>
              </h2>
              <dl className="pairs">
                <dt>model segment</dt>
                <dd>
                  <SegmentChip segment={byIndex.get(current.segment ?? -1)} fallback={current.segmentName ?? '—'} /> {current.confidence === null ? '' : format.probability(current.confidence)}
                </dd>
                <dt>runner-up</dt>
                <dd>
                  <SegmentChip segment={byIndex.get(current.secondSegment ?? -1)} /> {current.secondProbability === null ? '' : format.probability(current.secondProbability)}
                </dd>
                <dt>worth</dt>
                <dd data-testid="review-worth">
                  {format.eurosPrecise(current.value)} = {format.euros(Math.max(0, current.revenue))} at stake × {format.probability(current.uncertainty)} unsure
                  {current.queued ? '' : ' · not queued (beyond the capacity)'}
                </dd>
                <dt>last month</dt>
                <dd>
                  {current.previousSegmentName ?? 'not placed'}
                  {current.previousDecision ? ` · ${decisionText(current.previousDecision)}${current.previousDecision.note ? `: “${current.previousDecision.note}”` : ''}` : ''}
                </dd>
              </dl>
              <table className="compare">
                <thead>
                  <tr>
                    <th scope="col">feature</th>
                    <th scope="col">this customer</th>
                    <th scope="col">{nameOf(current.segment)} median</th>
                    {current.secondSegment !== null ? <th scope="col">{nameOf(current.secondSegment)} median</th> : null}
                  </tr>
                </thead>
                <tbody>
                  {current.featureComparison.map((entry) => {
                    const unit = featureUnit(entry.feature);
                    const show = (value: number | null) => (value === null ? '—' : formatInUnit(value, unit, format));
                    return (
                      <tr key={entry.feature}>
                        <th scope="row">{entry.label}</th>
                        <td>{show(entry.value)}</td>
                        <td>{show(entry.topMedian)}</td>
                        {current.secondSegment !== null ? <td>{show(entry.secondMedian)}</td> : null}
                      </tr>
                    );
                  })}
                </tbody>
              </table>
              {current.why ? (
                <p className="why-line" data-testid="review-why">
                  {current.why.text}
                </p>
              ) : null}
              {current.atypicalWhy ? (
                <p className="why-line atypical-line" data-testid="review-atypical-why">
                  Fits no segment well: {current.atypicalWhy.text}.
                </p>
              ) : null}
              <label className="note-field">
                note
                <textarea ref={noteBox} value={note} onChange={(e) => setNote(e.target.value)} rows={2} maxLength={2000} data-testid="review-note" />
              </label>
              <div className="decide">
                <button type="button" className="button" onClick={() => decide('keep')} disabled={busy} data-testid="review-keep">
                  Keep <kbd>k</kbd>
                </button>
                <span className="move-group">
                  <select value={moveTarget ?? ''} onChange={(e) => setMoveTarget(Number(e.target.value))} aria-label="Move to segment" data-testid="review-move-select">
                    {ordered.map((segment, i) => (
                      <option key={segment.segment} value={segment.segment}>
                        {i + 1}. {segment.name}
                      </option>
                    ))}
                  </select>
                  <button type="button" className="button" onClick={() => moveTarget !== null && decide('move', moveTarget)} disabled={busy || moveTarget === null} data-testid="review-move">
                    Move <kbd>1–{Math.min(9, ordered.length)}</kbd>
                  </button>
                </span>
                <button type="button" className="button button-caution" onClick={() => decide('exclude')} disabled={busy} data-testid="review-exclude">
                  Exclude <kbd>x</kbd>
                </button>
              </div>
              <p className="quiet" data-testid="review-decision">
                {current.decision
                  ? `Decided: ${decisionText(current.decision)}${current.decision.reviewer ? ` by ${current.decision.reviewer}` : ''}, ${format.dateTime(current.decision.decidedAt)}${current.decision.carriedFromRunId !== null ? ` (carried over from run #${current.decision.carriedFromRunId})` : ''}.`
                  : 'No decision yet.'}
              </p>
            </>
          ) : (
            <p className="quiet">{counts && counts.total === 0 ? 'Nothing to review in this view.' : 'Choose a customer.'}</p>
          )}
          <details className="shortcuts" data-testid="review-shortcuts">
            <summary>Keyboard shortcuts</summary>
            <dl className="pairs">
              {reviewShortcutHelp.map((entry) => (
                <div key={entry.keys} className="pair">
                  <dt>
                    <kbd>{entry.keys}</kbd>
                  </dt>
                  <dd>{entry.does}</dd>
                </div>
              ))}
            </dl>
          </details>
        </aside>
      </div>
    </section>
  );
}
