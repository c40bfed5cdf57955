/*
 * Sources screen. Test ids: screen-sources, demo-panel, demo-load, demo-task (with -bar, -cancel,
 * -dismiss), import-kind, file-drop, file-input, file-choose, file-path, preview-panel,
 * mapping-source, map-<field>, read-date-order, read-decimal, read-sheet, read-encoding, preview-rows,
 * preview-missing, import-start, import-task (with -bar, -cancel, -dismiss), import-result,
 * import-open-report, import-history, import-row-<import id>, report-panel, report-title,
 * report-table.
 */
import { useCallback, useEffect, useMemo, useRef, useState } from 'react';
import type { ApiError, DemoResult, FilePreview, ImportKind, ImportRecord, ImportResult } from '../../../src/api/contract.js';
import { useApi, useClient, useFormat, useLoad, useTask } from '../app/client-context.js';
import { useWorkspace } from '../app/workspace.js';
import { ErrorNote, Loading } from '../components/Notice.js';
import { TaskPanel } from '../components/TaskPanel.js';
import { VirtualTable, pagesFromArray, type Column } from '../components/VirtualTable.js';
import { toApiError } from '../lib/task-state.js';

const kindLabels: Record<ImportKind, string> = {
  receipts: 'Receipts (spend history)',
  visits: 'Store and online visits',
  customers: 'Customers (consent, home store)',
  features: 'Customer features prepared elsewhere',
};

interface ReadOptions {
  dateOrder: 'iso' | 'day-first' | 'month-first';
  decimalSeparator: '.' | ',';
  sheet?: string;
  encoding?: 'utf-8' | 'windows-1252';
}

export function SourcesScreen() {
  const api = useApi();
  const format = useFormat();
  const { database, refreshDatabase } = useWorkspace();
  const imports = useLoad(() => api.listImports({}), `imports:${database?.path ?? ''}:${database?.imports ?? 0}`);
  const [reportFor, setReportFor] = useState<number | null>(null);
  const demo = useTask<'loadDemo'>(() => refreshDatabase(true));
  const empty = database !== null && database.customers === 0 && database.receipts === 0;

  return (
    <section className="screen" data-testid="screen-sources">
      <header className="screen-head">
        <h1>Sources</h1>
        <p className="lede">Bring in this month's loyalty files. Each import is all of a file or none of it; rejected rows are listed with their reasons.</p>
      </header>

      <div className={empty ? 'panel demo-panel is-prominent' : 'panel demo-panel'} data-testid="demo-panel">
        <div className="panel-head">
          <h2>Demo data</h2>
          <button
            type="button"
            className={empty ? 'button button-primary' : 'button'}
            onClick={() => demo.start(() => api.loadDemo({}))}
            disabled={demo.view.state === 'running' || demo.view.state === 'starting'}
            data-testid="demo-load"
          >
            Load the demo chain
          </button>
        </div>
        <p className="quiet">
          {empty ? 'This database is empty. ' : ''}Larkmoor Fresh Markets is an invented grocery chain (16 stores, a loyalty card, receipts in EUR),
          generated from a fixed seed; nothing in it is real.
        </p>
        <TaskPanel<DemoResult>
          view={demo.view}
          title="Loading the demo chain"
          testId="demo-task"
          format={format}
          onCancel={demo.cancel}
          onDismiss={demo.dismiss}
          describeResult={(result) => (
            <p>
              Loaded {format.count(result.customers)} customers, {format.count(result.receipts)} receipts and {format.count(result.visits)} visits.
            </p>
          )}
        />
      </div>

      <ImportPanel
        onImported={(result) => {
          refreshDatabase();
          imports.reload();
          if (result.importId !== null && result.rowsRejected > 0) setReportFor(result.importId);
        }}
        onOpenReport={setReportFor}
      />

      <div className="panel">
        <h2>Import history</h2>
        {imports.error ? <ErrorNote error={imports.error} onRetry={imports.reload} /> : null}
        {imports.data ? <ImportHistory imports={imports.data} onOpenReport={setReportFor} selected={reportFor} /> : imports.loading ? <Loading what="the import history" /> : null}
      </div>

      {reportFor !== null ? <RejectionReport importId={reportFor} record={imports.data?.find((entry) => entry.importId === reportFor)} onClose={() => setReportFor(null)} /> : null}
    </section>
  );
}

function ImportPanel({ onImported, onOpenReport }: { onImported: (result: ImportResult) => void; onOpenReport: (importId: number) => void }) {
  const api = useApi();
  const client = useClient();
  const format = useFormat();
  const [kind, setKind] = useState<ImportKind>('receipts');
  const [path, setPath] = useState<string | null>(null);
  const [fileName, setFileName] = useState('');
  const [mapping, setMapping] = useState<Record<string, string> | undefined>(undefined);
  const [read, setRead] = useState<ReadOptions>({ dateOrder: 'iso', decimalSeparator: '.' });
  const [preview, setPreview] = useState<FilePreview | null>(null);
  const [previewError, setPreviewError] = useState<ApiError | null>(null);
  const [dragging, setDragging] = useState(false);
  const fileInput = useRef<HTMLInputElement>(null);
  const task = useTask<'importFile'>(onImported);

  useEffect(() => {
    if (!path) return;
    let current = true;
    api.previewFile({ path, kind, mapping, rows: 20, ...read }).then(
      (result) => {
        if (!current) return;
        setPreview(result);
        setPreviewError(null);
      },
      (error: unknown) => {
        if (!current) return;
        setPreview(null);
        setPreviewError(toApiError(error));
      },
    );
    return () => {
      current = false;
    };
  }, [api, path, kind, mapping, read]);

  const takeFile = useCallback(
    async (file: File) => {
      setFileName(file.name);
      setMapping(undefined);
      task.dismiss();
      try {
        setPath(await client.shell.pathForFile(file));
      } catch (error) {
        setPreviewError(toApiError(error));
      }
    },
    [client, task],
  );

  const chooseNative = async () => {
    const chosen = await client.shell.chooseOpenFile({ title: 'Choose a file to import', extensions: ['csv', 'txt', 'tsv', 'xlsx'] });
    if (chosen) {
      setFileName(chosen.split(/[\\/]/).pop() ?? chosen);
      setMapping(undefined);
      setPath(chosen);
    }
  };

  const running = task.view.state === 'running' || task.view.state === 'starting';
  const canImport = Boolean(path && preview && preview.missingFields.length === 0 && !running);
  const effectiveMapping = mapping ?? preview?.mapping ?? {};

  const previewColumns: Column<FilePreview['rows'][number]>[] = useMemo(() => {
    if (!preview) return [];
    const mapped = preview.fields.filter((field) => effectiveMapping[field.field]);
    return [
      { key: 'line', header: 'line', width: '4rem', align: 'right', render: (row) => row.line },
      ...mapped.map((field) => ({
        key: field.field,
        header: field.field,
        width: 'minmax(7rem, 1fr)',
        render: (row: FilePreview['rows'][number]) => {
          const parsed = row.parsed?.[field.field];
          return parsed === undefined || parsed === null ? <span className="quiet">{row.cells[effectiveMapping[field.field]] ?? ''}</span> : String(parsed);
        },
      })),
      { key: 'problem', header: 'problem', width: 'minmax(12rem, 2fr)', render: (row) => (row.problem ? <span className="problem">{row.problem}</span> : <span className="ok">ok</span>) },
    ];
  }, [preview, effectiveMapping]);
  const previewRows = useMemo(() => pagesFromArray(preview?.rows ?? []), [preview]);

  return (
    <div className="panel" data-testid="import-panel">
      <div className="panel-head">
        <h2>Import a file</h2>
        <label>
          kind
          <select value={kind} onChange={(e) => { setKind(e.target.value as ImportKind); setMapping(undefined); }} data-testid="import-kind">
            {(Object.keys(kindLabels) as ImportKind[]).map((value) => (
              <option key={value} value={value}>
                {kindLabels[value]}
              </option>
            ))}
          </select>
        </label>
      </div>
      <div
        className={dragging ? 'drop is-over' : 'drop'}
        data-testid="file-drop"
        onDragOver={(event) => {
          event.preventDefault();
          setDragging(true);
        }}
        onDragLeave={() => setDragging(false)}
        onDrop={(event) => {
          event.preventDefault();
          setDragging(false);
          const file = event.dataTransfer.files[0];
          if (file) void takeFile(file);
        }}
      >
        <p>
          Drop a CSV or Excel file here, or{' '}
          <button type="button" className="button-link" onClick={() => (client.shell.kind === 'electron' ? void chooseNative() : fileInput.current?.click())} data-testid="file-choose">
            choose one
          </button>
          .
        </p>
        <input
          ref={fileInput}
          type="file"
          className="visually-hidden"
          accept=".csv,.txt,.tsv,.xlsx"
          onChange={(event) => {
            const file = event.target.files?.[0];
            if (file) void takeFile(file);
            event.target.value = '';
          }}
          data-testid="file-input"
        />
        {fileName ? <p className="file-name" data-testid="file-path">{fileName}</p> : null}
      </div>

      {previewError ? <ErrorNote error={previewError} /> : null}
      {previewError?.details?.encodingChoices || read.encoding ? (
        <label className="inline-controls">
          text encoding
          <select value={read.encoding ?? 'utf-8'} onChange={(e) => setRead({ ...read, encoding: e.target.value as ReadOptions['encoding'] })} data-testid="read-encoding">
            <option value="utf-8">UTF-8</option>
            <option value="windows-1252">Windows-1252 (older spreadsheet exports on Windows)</option>
          </select>
        </label>
      ) : null}
      {preview ? (
        <div className="preview" data-testid="preview-panel">
          <p className="mapping-source" data-testid="mapping-source">
            {preview.mappingSource === 'saved'
              ? 'Using the column mapping you saved for this kind of file last time. Change any column below.'
              : preview.mappingSource === 'automatic'
                ? 'Columns matched by name. Check them below; the mapping is saved with the import for next month.'
                : 'Using the mapping chosen below.'}
            {' '}
            {preview.delimiter ? `Delimiter “${preview.delimiter === '\t' ? 'tab' : preview.delimiter}”, ` : ''}
            {preview.encoding}.
          </p>
          <div className="mapping-grid">
            {preview.fields.map((field) => (
              <label key={field.field} className="field" title={field.description}>
                <span>
                  {field.field}
                  {field.required ? <abbr title="required"> *</abbr> : null}
                </span>
                <select
                  value={effectiveMapping[field.field] ?? ''}
                  onChange={(e) => {
                    const next = { ...effectiveMapping };
                    if (e.target.value) next[field.field] = e.target.value;
                    else delete next[field.field];
                    setMapping(next);
                  }}
                  data-testid={`map-${field.field}`}
                >
                  <option value="">— not in this file —</option>
                  {preview.columns.map((column) => (
                    <option key={column} value={column}>
                      {column}
                    </option>
                  ))}
                </select>
              </label>
            ))}
          </div>
          <div className="inline-controls">
            <label>
              dates
              <select value={read.dateOrder} onChange={(e) => setRead({ ...read, dateOrder: e.target.value as ReadOptions['dateOrder'] })} data-testid="read-date-order">
                <option value="iso">ISO (2026-11-30)</option>
                <option value="day-first">day first (30/11/2026)</option>
                <option value="month-first">month first (11/30/2026)</option>
              </select>
            </label>
            <label>
              decimals
              <select value={read.decimalSeparator} onChange={(e) => setRead({ ...read, decimalSeparator: e.target.value as ReadOptions['decimalSeparator'] })} data-testid="read-decimal">
                <option value=".">point (12.50)</option>
                <option value=",">comma (12,50)</option>
              </select>
            </label>
            {preview.sheets.length ? (
              <label>
                sheet
                <select value={read.sheet ?? preview.sheets[0]} onChange={(e) => setRead({ ...read, sheet: e.target.value })} data-testid="read-sheet">
                  {preview.sheets.map((sheet) => (
                    <option key={sheet} value={sheet}>
                      {sheet}
                    </option>
                  ))}
                </select>
              </label>
            ) : null}
          </div>
          {preview.missingFields.length ? (
            <p className="field-error" data-testid="preview-missing" role="alert">
              Choose a column for: {preview.missingFields.join(', ')}.
            </p>
          ) : null}
          <VirtualTable columns={previewColumns} total={preview.rows.length} fetchPage={previewRows} testId="preview-rows" label="First rows of the file as they would be read" height={260} />
          <button
            type="button"
            className="button button-primary"
            disabled={!canImport}
            onClick={() => path && task.start(() => api.importFile({ path, kind, mapping: effectiveMapping, ...read }))}
            data-testid="import-start"
          >
            Import {fileName}
          </button>
        </div>
      ) : null}
      <TaskPanel<ImportResult>
        view={task.view}
        title="Importing"
        testId="import-task"
        format={format}
        onCancel={task.cancel}
        onDismiss={task.dismiss}
        describeResult={(result) => (
          <div data-testid="import-result">
            {result.alreadyImported ? (
              <p>This file was imported before (same content); nothing was added.</p>
            ) : (
              <p>
                Read {format.count(result.rowsRead)} rows: {format.count(result.rowsImported)} imported, {format.count(result.rowsRejected)} rejected,{' '}
                {format.count(result.duplicatesSkipped)} duplicates skipped
                {result.amountTotal !== null ? `, ${format.eurosPrecise(result.amountTotal)} in total` : ''}.
              </p>
            )}
            {result.rowsRejected > 0 && result.importId !== null ? (
              <button type="button" className="button-quiet" onClick={() => onOpenReport(result.importId as number)} data-testid="import-open-report">
                Show the rejected rows
              </button>
            ) : null}
          </div>
        )}
      />
    </div>
  );
}

function ImportHistory({ imports, onOpenReport, selected }: { imports: ImportRecord[]; onOpenReport: (importId: number) => void; selected: number | null }) {
  const format = useFormat();
  const ordered = useMemo(() => [...imports].sort((a, b) => b.importId - a.importId), [imports]);
  const fetchPage = useMemo(() => pagesFromArray(ordered), [ordered]);
  if (!ordered.length) return <p className="quiet">Nothing imported yet.</p>;
  const columns: Column<ImportRecord>[] = [
    { key: 'when', header: 'imported', width: '11rem', render: (row) => format.dateTime(row.importedAt) },
    { key: 'file', header: 'file', width: 'minmax(12rem, 2fr)', render: (row) => <span title={row.fileName}>{row.fileName}</span> },
    { key: 'kind', header: 'kind', width: '6rem', render: (row) => row.kind },
    { key: 'rows', header: 'imported rows', width: '8rem', align: 'right', render: (row) => format.count(row.rowsImported) },
    { key: 'dupes', header: 'duplicates', width: '6.5rem', align: 'right', render: (row) => format.count(row.duplicatesSkipped) },
    { key: 'amount', header: 'amount', width: '9rem', align: 'right', render: (row) => (row.amountTotal === null ? '—' : format.euros(row.amountTotal)) },
    {
      key: 'rejected',
      header: 'rejected',
      width: '8rem',
      align: 'right',
      render: (row) =>
        row.rowsRejected > 0 ? (
          <button type="button" className="button-link" onClick={() => onOpenReport(row.importId)}>
            {format.count(row.rowsRejected)} · report
          </button>
        ) : (
          '0'
        ),
    },
  ];
  return (
    <VirtualTable
      columns={columns}
      total={ordered.length}
      fetchPage={fetchPage}
      testId="import-history"
      label="Import history"
      rowTestId={(row) => `import-row-${row.importId}`}
      selectedIndex={selected === null ? null : ordered.findIndex((row) => row.importId === selected)}
      height={280}
    />
  );
}

function RejectionReport({ importId, record, onClose }: { importId: number; record: ImportRecord | undefined; onClose: () => void }) {
  const api = useApi();
  const format = useFormat();
  const [total, setTotal] = useState<number | null>(null);
  const [failure, setFailure] = useState<ApiError | null>(null);
  const fetchPage = useCallback(
    (offset: number, limit: number) =>
      api.importReport({ importId, offset, limit }).then((page) => {
        setTotal(page.total);
        return page.rows;
      }),
    [api, importId],
  );
  useEffect(() => {
    fetchPage(0, 1).catch((error: unknown) => setFailure(toApiError(error)));
  }, [fetchPage]);
  type ReportRow = Awaited<ReturnType<typeof fetchPage>>[number];
  const columns: Column<ReportRow>[] = [
    { key: 'line', header: 'line', width: '5rem', align: 'right', render: (row) => format.count(row.line) },
    { key: 'column', header: 'column', width: '9rem', render: (row) => row.column },
    { key: 'value', header: 'value', width: 'minmax(8rem, 1fr)', render: (row) => <code>{row.value}</code> },
    { key: 'reason', header: 'reason', width: 'minmax(14rem, 2fr)', render: (row) => row.reason },
  ];
  return (
    <div className="panel" data-testid="report-panel">
      <div className="panel-head">
        <h2 data-testid="report-title">
          Rejected rows{record ? ` of ${record.fileName}` : ''}
          {total !== null ? ` · ${format.count(total)}` : ''}
        </h2>
        <button type="button" className="button-quiet" onClick={onClose}>
          Close
        </button>
      </div>
      {failure ? <ErrorNote error={failure} /> : null}
      <VirtualTable columns={columns} total={total ?? 0} fetchPage={fetchPage} testId="report-table" label="Rejected rows with line, column and reason" height={300} />
      {record?.reportPath ? <p className="caption">Also saved as {record.reportPath}.</p> : null}
    </div>
  );
}
