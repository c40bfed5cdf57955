/*
 * Certainty screen. Test ids: screen-certainty, slider-borderline-confidence,
 * slider-borderline-margin, slider-atypical-percentile, count-borderline, count-atypical,
 * certainty-histogram, queue-summary (see components/QueueSummary.tsx), borderline-table,
 * borderline-row-<customer id>, certainty-no-run.
 */
import { useCallback, useEffect, useMemo, useState } from 'react';
import type { BorderlineRow } from '../../../src/api/contract.js';
import { useApi, useFormat, useLoad } from '../app/client-context.js';
import { segmentIndex, useWorkspace } from '../app/workspace.js';
import { confidenceOption } from '../charts/certainty-charts.js';
import { Chart } from '../components/Chart.js';
import { ErrorNote, Loading } from '../components/Notice.js';
import { QueueSummary } from '../components/QueueSummary.js';
import { SegmentChip } from '../components/SegmentChip.js';
import { VirtualTable, type Column } from '../components/VirtualTable.js';
import { RunScreen } from './NoRun.js';

const whyMethodNote: Record<BorderlineRow['why']['method'], string> = {
  exact: 'Exact split of the log-odds between the two segments by feature.',
  shapley: 'Split of the log-odds between the two segments by feature; correlated features share what they say (Shapley values over the features).',
};

/** Waits until a value has been still for `delay` ms, so dragging a slider sends few requests. */
function useSettled<T>(value: T, delay: number): T {
  const [settled, setSettled] = useState(value);
  useEffect(() => {
    const timer = setTimeout(() => setSettled(value), delay);
    return () => clearTimeout(timer);
  }, [value, delay]);
  return settled;
}

export function CertaintyScreen() {
  return <RunScreen screen="certainty" title="Certainty" render={(runId) => <CertaintyView key={runId} runId={runId} />} />;
}

function CertaintyView({ runId }: { runId: number }) {
  const api = useApi();
  const format = useFormat();
  const { runs, segments, refreshSegments } = useWorkspace();
  const { byIndex } = segmentIndex(segments);
  const run = useLoad(() => api.runSummary({ runId }), `run:${runId}`);
  const stored = run.data?.settings;
  const [thresholds, setThresholds] = useState<{ confidence: number; margin: number; atypical: number } | null>(null);
  useEffect(() => {
    if (stored && !thresholds) {
      setThresholds({ confidence: stored.borderlineConfidence, margin: stored.borderlineMargin, atypical: stored.atypicalPercentile });
    }
  }, [stored, thresholds]);
  const settled = useSettled(thresholds, 60);

  const summary = useLoad(
    settled
      ? () =>
          api.certainty({
            runId,
            borderlineConfidence: settled.confidence,
            borderlineMargin: settled.margin,
            atypicalPercentile: settled.atypical,
            bins: 20,
          })
      : null,
    `certainty:${runId}:${settled?.confidence}:${settled?.margin}:${settled?.atypical}`,
  );
  // Keep showing the last answer while the next one is on its way (no flicker while dragging).
  const [shown, setShown] = useState(summary.data);
  useEffect(() => {
    if (summary.data) setShown(summary.data);
  }, [summary.data]);

  const histogram = useMemo(
    () => (shown && settled ? confidenceOption(shown, settled.confidence, format) : null),
    [shown, settled, format],
  );

  const tableVersion = `${settled?.confidence}:${settled?.margin}`;
  const [borderlineTotal, setBorderlineTotal] = useState<number | null>(null);
  const fetchBorderline = useCallback(
    (offset: number, limit: number) =>
      api
        .borderline({ runId, offset, limit, borderlineConfidence: settled?.confidence, borderlineMargin: settled?.margin })
        .then((page) => {
          setBorderlineTotal(page.total);
          return page.rows;
        }),
    [api, runId, settled?.confidence, settled?.margin],
  );
  useEffect(() => {
    if (settled) fetchBorderline(0, 1).catch(() => setBorderlineTotal(null));
  }, [fetchBorderline, settled]);

  const columns: Column<BorderlineRow>[] = [
    { key: 'id', header: 'customer', width: '9rem', render: (row) => <code>{row.customerId}</code> },
    { key: 'top', header: 'most likely', width: 'minmax(11rem, 1.3fr)', render: (row) => <SegmentChip segment={byIndex.get(row.segment ?? -1)} fallback={row.segmentName ?? '—'} /> },
    { key: 'topP', header: 'prob.', width: '4.5rem', align: 'right', render: (row) => (row.confidence === null ? '—' : format.probability(row.confidence)) },
    { key: 'second', header: 'runner-up', width: 'minmax(11rem, 1.3fr)', render: (row) => <SegmentChip segment={byIndex.get(row.secondSegment ?? -1)} fallback={row.secondSegmentName ?? '—'} /> },
    { key: 'secondP', header: 'prob.', width: '4.5rem', align: 'right', render: (row) => (row.secondProbability === null ? '—' : format.probability(row.secondProbability)) },
    { key: 'margin', header: 'margin', width: '5rem', align: 'right', render: (row) => (row.margin === null ? '—' : format.probability(row.margin)) },
    {
      key: 'why',
      header: 'why',
      width: 'minmax(16rem, 3fr)',
      render: (row) => (
        <span className="why" title={`${row.why.text}. ${whyMethodNote[row.why.method]}`}>
          {row.why.text}
        </span>
      ),
    },
  ];

  if (run.error) return <section className="screen" data-testid="screen-certainty"><h1>Certainty</h1><ErrorNote error={run.error} onRetry={run.reload} /></section>;
  if (!thresholds) return <section className="screen" data-testid="screen-certainty"><h1>Certainty</h1><Loading what="the run" /></section>;
  const runItem = runs.find((item) => item.runId === runId);

  return (
    <section className="screen" data-testid="screen-certainty">
      <header className="screen-head">
        <h1>Certainty</h1>
        <p className="lede">
          How sure the model is about each of {format.count(shown?.customers ?? runItem?.customers ?? 0)} placed customers. Move the thresholds to
          see how many would go to review; the stored run keeps its own settings.
        </p>
      </header>
      <div className="panel certainty-controls">
        <Slider
          label="Borderline below confidence"
          value={thresholds.confidence}
          min={0.3}
          max={0.99}
          step={0.01}
          display={format.decimal(thresholds.confidence, 2)}
          testId="slider-borderline-confidence"
          onChange={(confidence) => setThresholds({ ...thresholds, confidence })}
        />
        <Slider
          label="…or margin to the runner-up below"
          value={thresholds.margin}
          min={0}
          max={0.8}
          step={0.01}
          display={format.decimal(thresholds.margin, 2)}
          testId="slider-borderline-margin"
          onChange={(margin) => setThresholds({ ...thresholds, margin })}
        />
        <Slider
          label="Atypical below density percentile"
          value={thresholds.atypical}
          min={0}
          max={10}
          step={0.1}
          display={`${format.decimal(thresholds.atypical, 1)} %`}
          testId="slider-atypical-percentile"
          onChange={(atypical) => setThresholds({ ...thresholds, atypical })}
        />
        <div className="counts" aria-live="polite">
          <div className="count">
            <span className="count-value" data-testid="count-borderline">{shown ? format.count(shown.borderline) : '…'}</span>
            <span className="count-label">borderline{shown ? ` (${format.percent(shown.borderline / Math.max(1, shown.customers))})` : ''}</span>
          </div>
          <div className="count">
            <span className="count-value" data-testid="count-atypical">{shown ? format.count(shown.atypical) : '…'}</span>
            <span className="count-label">
              atypical{shown ? ` (log density below ${format.decimal(shown.atypicalLogDensityBelow, 2)})` : ''}
            </span>
          </div>
        </div>
      </div>
      {summary.error ? <ErrorNote error={summary.error} onRetry={summary.reload} /> : null}
      {shown ? (
        <>
          <QueueSummary
            runId={runId}
            queue={shown.queue}
            onAccepted={() => {
              summary.reload();
              refreshSegments();
            }}
          />
          <p className="caption">The stored run's review queue, at its own thresholds and capacity; the sliders above do not change it.</p>
        </>
      ) : null}
      <div className="panel">
        <h2>Confidence of each customer's segment</h2>
        {histogram ? (
          <Chart option={histogram} label="Histogram of confidence" height={260} testId="certainty-histogram" />
        ) : (
          <Loading what="the histogram" />
        )}
        <p className="caption">
          All placed customers, counted in the core. Bars at or below the borderline confidence are drawn in the warm colour.
        </p>
      </div>
      <div className="panel">
        <div className="panel-head">
          <h2>Borderline customers</h2>
          <span className="quiet">{borderlineTotal === null ? '' : `${format.count(borderlineTotal)} customers under these thresholds`}</span>
        </div>
        <VirtualTable
          columns={columns}
          total={borderlineTotal ?? 0}
          fetchPage={fetchBorderline}
          version={tableVersion}
          testId="borderline-table"
          label="Borderline customers"
          rowTestId={(row) => `borderline-row-${row.customerId}`}
          height={440}
          rowHeight={44}
        />
      </div>
    </section>
  );
}

function Slider(props: {
  label: string;
  value: number;
  min: number;
  max: number;
  step: number;
  display: string;
  testId: string;
  onChange: (value: number) => void;
}) {
  return (
    <label className="slider">
      <span className="slider-label">
        {props.label} <strong>{props.display}</strong>
      </span>
      <input
        type="range"
        min={props.min}
        max={props.max}
        step={props.step}
        value={props.value}
        onChange={(event) => props.onChange(Number(event.target.value))}
        data-testid={props.testId}
      />
    </label>
  );
}
