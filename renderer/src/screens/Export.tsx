/*
 * Export screen. Test ids: screen-export, export-cautions, export-segment-<spend rank>,
 * export-min-confidence, export-include-reviewed, export-format, export-csv-dialect,
 * export-csv-raw-ids, export-csv-raw-ids-warning, export-path, export-choose-path,
 * export-start, export-task (with -bar, -cancel, -dismiss), export-result, export-count-exported,
 * export-count-suppressed, export-upper-bound, export-review-state, export-no-run, export-download (browser: the
 * download's state, data-state="saving|saved|failed"); model-sql… (ScoreInDatabase.tsx).
 */
import { useEffect, useMemo, useState } from 'react';
import type { CsvDialect, ExportResult } from '../../../src/api/contract.js';
import { useApi, useClient, useFormat, useLoad, useTask } from '../app/client-context.js';
import { segmentIndex, useWorkspace } from '../app/workspace.js';
import { SegmentChip } from '../components/SegmentChip.js';
import { TaskPanel } from '../components/TaskPanel.js';
import { queueWords } from '../lib/queue-words.js';
import { NoRun } from './NoRun.js';
import { ScoreInDatabase } from './ScoreInDatabase.js';

export function ExportScreen() {
  const { runId, appInfo } = useWorkspace();
  return (
    <section className="screen" data-testid="screen-export">
      <header className="screen-head">
        <h1>Export</h1>
        <p className="lede">Labelled customer lists for campaign teams. Customers without marketing consent are never listed, only counted.</p>
      </header>
      <aside className="cautions" data-testid="export-cautions" aria-label="Before you export">
        <h2>Before you export</h2>
        {(appInfo?.cautions ?? []).map((paragraph) => (
          <p key={paragraph}>{paragraph}</p>
        ))}
      </aside>
      {runId === null ? <NoRun screen="export" /> : <ExportForm key={runId} runId={runId} />}
      {runId === null ? null : <ScoreInDatabase key={`sql-${runId}`} runId={runId} />}
    </section>
  );
}

function defaultFileName(runId: number, format: 'xlsx' | 'csv'): string {
  return `spendmix-run-${runId}.${format}`;
}

function ExportForm({ runId }: { runId: number }) {
  const api = useApi();
  const client = useClient();
  const format = useFormat();
  const { segments, database } = useWorkspace();
  const { ordered } = segmentIndex(segments);
  const [chosen, setChosen] = useState<Set<string>>(new Set());
  const [minConfidence, setMinConfidence] = useState(0);
  const [includeReviewed, setIncludeReviewed] = useState(true);
  const [fileFormat, setFileFormat] = useState<'xlsx' | 'csv'>('xlsx');
  const [csvDialect, setCsvDialect] = useState<CsvDialect>('comma');
  const [csvRawIds, setCsvRawIds] = useState(false);
  // In the browser the host writes the export into its session folder and the browser downloads
  // it, so the field is a file name; in the desktop app it is the path the file is written to.
  const inBrowser = client.shell.kind === 'browser';
  const folder = !inBrowser && database?.path ? database.path.replace(/[^\\/]*$/, '') : '';
  const [out, setOut] = useState(`${folder}${defaultFileName(runId, 'xlsx')}`);
  const [download, setDownload] = useState<{ state: 'saving' | 'saved' | 'failed'; message: string } | null>(null);
  // Re-read with the segments: a review decision or "accept the rest" elsewhere changes the counts.
  const run = useLoad(() => api.runSummary({ runId }), `export-run:${runId}:${segments?.segments.map((segment) => `${segment.key}=${segment.customers}`).join(',')}`);
  const review = run.data?.runId === runId ? queueWords(run.data.review, format) : null;
  const task = useTask<'exportRun'>((result) => {
    if (!inBrowser) return;
    const name = result.out.split(/[\\/]/).pop() ?? result.out;
    setDownload({ state: 'saving', message: `Downloading ${name}…` });
    client.shell.deliverExport(result).then(
      () => setDownload({ state: 'saved', message: `Downloaded ${name} to your browser's downloads.` }),
      (error: unknown) => setDownload({ state: 'failed', message: `The download failed: ${(error as Error).message}. Export again to retry.` }),
    );
  });

  // Every segment is chosen again whenever the segments (and so their names) are re-read.
  useEffect(() => setChosen(new Set(ordered.map((segment) => segment.name))), [segments]);

  const upperBound = useMemo(() => ordered.filter((segment) => chosen.has(segment.name)).reduce((sum, segment) => sum + segment.customers, 0), [ordered, chosen]);
  const everySegment = chosen.size === ordered.length;

  const switchFormat = (next: 'xlsx' | 'csv') => {
    setFileFormat(next);
    setOut((path) => path.replace(/\.(xlsx|csv)$/i, `.${next}`));
  };

  const choosePath = async () => {
    const path = await client.shell.chooseSavePath({ title: 'Export customers', defaultName: defaultFileName(runId, fileFormat), extensions: [fileFormat] });
    if (path) setOut(path);
  };

  const start = () => {
    setDownload(null);
    task.start(() =>
      api.exportRun({
        runId,
        out,
        format: fileFormat,
        segments: everySegment ? undefined : [...chosen],
        minConfidence,
        includeReviewed,
        csvDialect,
        csvRawIds,
      }),
    );
  };

  const running = task.view.state === 'running' || task.view.state === 'starting';
  return (
    <>
      <div className="panel export-form">
        <fieldset>
          <legend>Segments to list (final segment, after review)</legend>
          <div className="checks">
            {ordered.map((segment) => (
              <label key={segment.segment} className="check">
                <input
                  type="checkbox"
                  checked={chosen.has(segment.name)}
                  onChange={(e) => {
                    const next = new Set(chosen);
                    if (e.target.checked) next.add(segment.name);
                    else next.delete(segment.name);
                    setChosen(next);
                  }}
                  data-testid={`export-segment-${segment.spendRank}`}
                />
                <SegmentChip segment={segment} />
                <span className="quiet">{format.count(segment.customers)}</span>
              </label>
            ))}
          </div>
        </fieldset>
        <div className="form-grid">
          <label>
            minimum confidence <strong>{format.decimal(minConfidence, 2)}</strong>
            <input type="range" min={0} max={0.99} step={0.01} value={minConfidence} onChange={(e) => setMinConfidence(Number(e.target.value))} data-testid="export-min-confidence" />
          </label>
          <label className="check">
            <input type="checkbox" checked={includeReviewed} onChange={(e) => setIncludeReviewed(e.target.checked)} data-testid="export-include-reviewed" />
            include customers a reviewer decided on (never those excluded)
          </label>
          <label>
            format
            <select value={fileFormat} onChange={(e) => switchFormat(e.target.value as 'xlsx' | 'csv')} data-testid="export-format">
              <option value="xlsx">Excel workbook (.xlsx): overview, customers, review, movement</option>
              <option value="csv">CSV list (.csv, UTF-8)</option>
            </select>
          </label>
          <label className="path-field">
            {inBrowser ? 'file name (downloaded by your browser)' : 'save to'}
            <span className="path-row">
              <input value={out} onChange={(e) => setOut(e.target.value)} spellCheck={false} data-testid="export-path" />
              {client.shell.kind === 'electron' ? (
                <button type="button" className="button-quiet" onClick={choosePath} data-testid="export-choose-path">
                  Choose…
                </button>
              ) : null}
            </span>
          </label>
        </div>
        {fileFormat === 'csv' ? (
          <fieldset className="csv-options">
            <legend>CSV list</legend>
            <label>
              layout
              <select value={csvDialect} onChange={(e) => setCsvDialect(e.target.value as CsvDialect)} data-testid="export-csv-dialect">
                <option value="comma">commas between fields, decimal point: 1234.56</option>
                <option value="semicolon">semicolons between fields, decimal comma: 1234,56 (e.g. German or French settings)</option>
              </select>
            </label>
            <label className="check">
              <input type="checkbox" checked={csvRawIds} onChange={(e) => setCsvRawIds(e.target.checked)} data-testid="export-csv-raw-ids" />
              write ids exactly as stored, for a system that reads the list by id
            </label>
            {csvRawIds ? (
              <p className="note note-warning" data-testid="export-csv-raw-ids-warning">
                Text that begins with = + - or @ is written as it is. A spreadsheet program that opens this file may run such text as a
                formula: give the file to the system that reads it, and do not open it in a spreadsheet program.
              </p>
            ) : null}
          </fieldset>
        ) : null}
        {review ? (
          <p className="note note-warning" data-testid="export-review-state">
            Review of this run — {review.queue} {review.leftOut}
            {review.decided ? ` ${review.decided}` : ''} Flagged customers without a decision are listed in the segment the model gives them and
            marked in the Flags column: their segment is an estimate the model is unsure of.
          </p>
        ) : null}
        <p className="quiet" data-testid="export-upper-bound">
          At most {format.count(upperBound)} placed customers in the chosen segments; the minimum confidence, review exclusions and
          consent bring the list down. The exact counts appear when the export is written.
        </p>
        <button type="button" className="button button-primary" onClick={start} disabled={running || chosen.size === 0 || !out.trim()} data-testid="export-start">
          Export
        </button>
      </div>
      <TaskPanel<ExportResult>
        view={task.view}
        title="Export"
        testId="export-task"
        format={format}
        onCancel={task.cancel}
        onDismiss={task.dismiss}
        describeResult={(result) => (
          <div data-testid="export-result">
            {inBrowser ? (
              <p data-testid="export-download" data-state={download?.state ?? 'saving'} className={download?.state === 'failed' ? 'problem' : undefined}>
                {download?.message ?? 'Downloading…'} ({result.sheets.length > 0 ? result.sheets.join(', ') : 'CSV list'})
              </p>
            ) : (
              <p>
                Wrote <code>{result.out}</code> ({result.sheets.join(', ')}).
              </p>
            )}
            <div className="stat-row">
              <div className="stat">
                <span className="stat-value" data-testid="export-count-exported">{format.count(result.customersExported)}</span>
                <span className="stat-label">customers listed</span>
              </div>
              <div className="stat">
                <span className="stat-value" data-testid="export-count-suppressed">{format.count(result.suppressedNoConsent)}</span>
                <span className="stat-label">left out: no or unknown marketing consent</span>
              </div>
            </div>
          </div>
        )}
      />
    </>
  );
}
