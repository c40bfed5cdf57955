/*
 * Movement screen. Test ids: screen-movement, movement-stability, movement-entered,
 * movement-left, movement-warnings, movement-heatmap, movement-flow, movement-no-parent,
 * movement-no-run.
 */
import { useMemo } from 'react';
import { useApi, useFormat, useLoad } from '../app/client-context.js';
import { segmentIndex, useWorkspace } from '../app/workspace.js';
import { flowOption, heatmapOption } from '../charts/movement-charts.js';
import { colourOf } from '../charts/segment-charts.js';
import { Chart } from '../components/Chart.js';
import { EmptyState, ErrorNote, Loading } from '../components/Notice.js';
import { orderMovement, stayedCount } from '../lib/movement-order.js';
import { ui } from '../lib/palette.js';
import { RunScreen } from './NoRun.js';

export function MovementScreen() {
  return <RunScreen screen="movement" title="Movement" render={(runId) => <MovementView key={runId} runId={runId} />} />;
}

function MovementView({ runId }: { runId: number }) {
  const api = useApi();
  const format = useFormat();
  const { segments } = useWorkspace();
  const { byIndex } = useMemo(() => segmentIndex(segments), [segments]);
  const movement = useLoad(() => api.movement({ runId }), `movement:${runId}`);
  const parentRunId = movement.data?.parentRunId ?? null;
  // The parent's segment keys say which of last month's segments each of this month's continues.
  const parent = useLoad(parentRunId === null ? null : () => api.segments({ runId: parentRunId }), `parent-segments:${parentRunId}`);

  const view = useMemo(() => {
    const raw = movement.data;
    if (!raw || raw.parentRunId === null || !parent.data) return null;
    const parentByIndex = new Map(parent.data.segments.map((segment) => [segment.segment, segment]));
    const currentByKey = new Map([...byIndex.values()].map((segment) => [segment.key, segment]));
    const ordered = orderMovement(
      raw,
      (segment) => parentByIndex.get(segment)?.spendRank ?? Number.MAX_SAFE_INTEGER,
      (segment) => byIndex.get(segment)?.spendRank ?? Number.MAX_SAFE_INTEGER,
    );
    const colourByName = new Map<string, string>();
    for (const entry of ordered.currentSegments) {
      const current = byIndex.get(entry.segment);
      colourByName.set(`now: ${entry.name}`, current ? colourOf(current) : ui.inkSoft);
    }
    for (const entry of ordered.parentSegments) {
      // A parent segment wears the colour of the segment that continues it; retired ones stay grey.
      const continued = currentByKey.get(parentByIndex.get(entry.segment)?.key ?? '');
      colourByName.set(`before: ${entry.name}`, continued ? colourOf(continued) : ui.inkSoft);
    }
    return {
      heatmap: heatmapOption(ordered, format),
      flow: flowOption(ordered, (node) => colourByName.get(node) ?? ui.inkSoft, format),
      stayed: stayedCount(ordered, (segment) => parentByIndex.get(segment)?.key, (segment) => byIndex.get(segment)?.key),
    };
  }, [movement.data, parent.data, byIndex, format]);
  const data = movement.data;
  const common = data?.common ?? 0;
  const stayed = view?.stayed ?? 0;
  const heatmap = view?.heatmap ?? null;
  const flow = view?.flow ?? null;

  return (
    <section className="screen" data-testid="screen-movement">
      <header className="screen-head">
        <h1>Movement</h1>
        <p className="lede">Who changed segment since the previous run, who is new and who has lapsed.</p>
      </header>
      {movement.error ? <ErrorNote error={movement.error} onRetry={movement.reload} /> : null}
      {!data ? (
        movement.loading ? <Loading what="movement" /> : null
      ) : data.parentRunId === null ? (
        <EmptyState title="This is a first run" testId="movement-no-parent">
          <p>Movement compares a run with the one before it. Refresh next month (Model screen) to see it.</p>
        </EmptyState>
      ) : (
        <>
          <div className="stat-row">
            <div className="stat">
              <span className="stat-value" data-testid="movement-stability">{data.stability === null ? '—' : format.decimal(data.stability, 3)}</span>
              <span className="stat-label">stability (adjusted Rand index, 1 = identical)</span>
            </div>
            <div className="stat">
              <span className="stat-value">{format.count(common)}</span>
              <span className="stat-label">in both runs, {view ? format.percent(stayed / Math.max(1, common)) : '…'} still in the segment that continues theirs</span>
            </div>
            <div className="stat">
              <span className="stat-value" data-testid="movement-entered">{format.count(data.entered)}</span>
              <span className="stat-label">entered (new, or no longer too new)</span>
            </div>
            <div className="stat">
              <span className="stat-value" data-testid="movement-left">{format.count(data.left)}</span>
              <span className="stat-label">left (lapsed or now unplaced)</span>
            </div>
          </div>
          {data.added.length || data.retired.length ? (
            <p className="quiet" data-testid="movement-added-retired">
              {data.added.length ? `New this run: ${data.added.join(', ')}. ` : ''}
              {data.retired.length ? `No longer found: ${data.retired.join(', ')}.` : ''}
            </p>
          ) : null}
          <div className="panel" data-testid="movement-warnings">
            <h2>Drift warnings</h2>
            {data.warnings.length ? (
              <ul className="warnings">
                {data.warnings.map((warning) => (
                  <li key={`${warning.segmentName}:${warning.kind}:${warning.feature ?? ''}`}>{warning.message}</li>
                ))}
              </ul>
            ) : (
              <p className="quiet">No segment moved its mean by more than half a standard deviation or its share by more than 5 points.</p>
            )}
          </div>
          <div className="two-up">
            <div className="panel">
              <h2>Previous × current</h2>
              {heatmap ? <Chart option={heatmap} label="Heatmap of customers by previous and current segment" height={360} testId="movement-heatmap" /> : null}
              <p className="caption">Customers in both runs; darker cells hold more customers.</p>
            </div>
            <div className="panel">
              <h2>Flow between segments</h2>
              {flow ? <Chart option={flow} label="Flow of customers from previous to current segments" height={360} testId="movement-flow" /> : null}
              <p className="caption">
                Band width is the number of customers. {format.count(data.entered)} entered and {format.count(data.left)} left outside these flows.
              </p>
            </div>
          </div>
        </>
      )}
    </section>
  );
}
