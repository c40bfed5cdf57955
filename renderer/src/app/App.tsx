import { useCallback, useEffect, useMemo, useState } from 'react';
import type { AppInfo, DatabaseInfo, ModelOptions, RunListItem, SegmentsResult } from '../../../src/api/contract.js';
import { formatLocation, parseLocation, screens, type ScreenId } from '../lib/navigation.js';
import { useApi, useClient, useFormat, useLoad, useWhenQuiet } from './client-context.js';
import { WorkspaceContext, type Workspace } from './workspace.js';
import { SourcesScreen } from '../screens/Sources.js';
import { ModelScreen } from '../screens/Model.js';
import { SegmentsScreen } from '../screens/Segments.js';
import { CertaintyScreen } from '../screens/Certainty.js';
import { ReviewScreen } from '../screens/Review.js';
import { MovementScreen } from '../screens/Movement.js';
import { ExportScreen } from '../screens/Export.js';
import { toApiError } from '../lib/task-state.js';
import { ErrorNote } from '../components/Notice.js';
import type { ApiError } from '../../../src/api/contract.js';

/*
 * Test ids: app-shell, nav-<screen id> (sources, model, segments, certainty, review, movement,
 * export), run-picker, run-warnings, database-summary, screen-<screen id> on each screen's root.
 */
/** The top bar's table counts wait until the API has been quiet this long (10 s at most). */
const summaryQuietMs = 250;
const summaryMaxWaitMs = 10_000;

export function App() {
  const api = useApi();
  const client = useClient();
  const whenQuiet = useWhenQuiet();
  const format = useFormat();
  const initial = parseLocation(window.location.hash);
  const [screen, setScreen] = useState<ScreenId>(initial.screen);
  const [runId, setRunIdState] = useState<number | null>(initial.runId);
  const [appInfo, setAppInfo] = useState<AppInfo | null>(null);
  const [database, setDatabase] = useState<DatabaseInfo | null>(null);
  const [runs, setRuns] = useState<RunListItem[]>([]);
  const [segments, setSegments] = useState<SegmentsResult | null>(null);
  const [failure, setFailure] = useState<ApiError | null>(null);
  const [segmentsNonce, setSegmentsNonce] = useState(0);
  const [modelOptions, setModelOptions] = useState<ModelOptions | null>(null);
  const [demoTaskId, setDemoTaskId] = useState<string | null>(null);

  const refreshDatabase = useCallback(
    (selectLatestRun = false, deferSummary = false) => {
      const fail = (error: unknown) => setFailure(toApiError(error));
      // Runs first and alone: the screens need the run id, and nothing else should wait for it.
      api.listRuns({}).then((list) => {
        setRuns(list);
        setFailure(null);
        setRunIdState((current) => {
          const latest = list.length ? Math.max(...list.map((run) => run.runId)) : null;
          if (selectLatestRun || current === null || !list.some((run) => run.runId === current)) return latest;
          return current;
        });
      }, fail);
      Promise.all([api.appInfo({}), api.modelOptions({})]).then(([info, options]) => {
        setAppInfo(info);
        setModelOptions(options);
      }, fail);
      // The database summary counts whole tables, which takes a while on a large database; at
      // start-up it is read once the screen's own calls have been answered, so it never delays
      // the first paint. After an import or a run it is read at once.
      const readSummary = () => api.databaseInfo({}).then(setDatabase, fail);
      if (deferSummary) void whenQuiet(summaryQuietMs, summaryMaxWaitMs).then(readSummary);
      else readSummary();
    },
    [api, whenQuiet],
  );

  useEffect(() => refreshDatabase(false, true), [refreshDatabase]);

  useEffect(() => {
    if (runId === null) {
      setSegments(null);
      return;
    }
    let current = true;
    api.segments({ runId }).then(
      (result) => current && setSegments(result),
      (error: unknown) => current && setFailure(toApiError(error)),
    );
    return () => {
      current = false;
    };
  }, [api, runId, segmentsNonce]);

  useEffect(() => {
    const wanted = formatLocation(screen, runId);
    if (window.location.hash !== wanted) window.history.replaceState(null, '', wanted);
  }, [screen, runId]);

  useEffect(() => {
    const onHash = () => {
      const location = parseLocation(window.location.hash);
      setScreen(location.screen);
      if (location.runId !== null) setRunIdState(location.runId);
    };
    window.addEventListener('hashchange', onHash);
    return () => window.removeEventListener('hashchange', onHash);
  }, []);

  useEffect(
    () =>
      client.shell.onMenuCommand((command) => {
        if (command.command === 'database-opened') refreshDatabase(true);
        else if (command.command === 'import-file') setScreen('sources');
        else if (command.command === 'demo-started') {
          setDemoTaskId(command.taskId);
          setScreen('sources');
        }
        else if (command.command === 'export') setScreen('export');
      }),
    [client, refreshDatabase],
  );

  const workspace: Workspace = useMemo(
    () => ({
      appInfo,
      database,
      runs,
      runId,
      segments: segments && segments.runId === runId ? segments : null,
      modelOptions,
      featureLabel: (feature: string) => modelOptions?.features.find((option) => option.name === feature)?.label ?? feature,
      featureUnit: (feature: string) => modelOptions?.features.find((option) => option.name === feature)?.unit ?? '',
      demoTaskId,
      clearDemoTask: () => setDemoTaskId(null),
      setRunId: setRunIdState,
      navigate: setScreen,
      refreshDatabase,
      refreshSegments: () => setSegmentsNonce((n) => n + 1),
    }),
    [appInfo, database, runs, runId, segments, modelOptions, demoTaskId, refreshDatabase],
  );

  const sortedRuns = [...runs].sort((a, b) => b.runId - a.runId);
  return (
    <WorkspaceContext.Provider value={workspace}>
      <div className="shell" data-testid="app-shell">
        <header className="topbar">
          <div className="brand">
            <span className="brand-mark" aria-hidden="true" />
            <span className="brand-name">Spendmix</span>
          </div>
          <div className="topbar-db" data-testid="database-summary">
            {database ? (
              <>
                <span className="db-path" title={database.path}>
                  {database.path.split(/[\\/]/).pop()}
                </span>
                <span>{format.count(database.customers)} customers</span>
                <span>{format.count(database.receipts)} receipts</span>
                {database.firstDataDate && database.lastDataDate ? (
                  <span>
                    {format.date(database.firstDataDate)} – {format.date(database.lastDataDate)}
                  </span>
                ) : null}
              </>
            ) : (
              <span>No database open</span>
            )}
          </div>
          <label className="run-picker">
            <span>Run</span>
            <select
              value={runId ?? ''}
              onChange={(event) => setRunIdState(Number(event.target.value))}
              disabled={runs.length === 0}
              data-testid="run-picker"
            >
              {runs.length === 0 ? <option value="">no runs yet</option> : null}
              {sortedRuns.map((run) => (
                <option key={run.runId} value={run.runId}>
                  #{run.runId} · {format.date(run.asOf)} · {run.segmentCount} segments, k = {run.k} {run.covariance} · {run.mode}
                </option>
              ))}
            </select>
          </label>
          {runId !== null ? <RunWarnings runId={runId} version={segmentsNonce} onOpen={() => setScreen('model')} /> : null}
        </header>
        <nav className="rail" aria-label="Screens">
          <ol>
            {screens.map((entry, position) => (
              <li key={entry.id}>
                <button
                  type="button"
                  className="rail-item"
                  aria-current={entry.id === screen ? 'page' : undefined}
                  onClick={() => setScreen(entry.id)}
                  data-testid={`nav-${entry.id}`}
                >
                  <span className="rail-step">{position + 1}</span>
                  <span className="rail-text">
                    <span className="rail-title">{entry.title}</span>
                    <span className="rail-hint">{entry.hint}</span>
                  </span>
                </button>
              </li>
            ))}
          </ol>
        </nav>
        <main className="content" id="content">
          {failure ? <ErrorNote error={failure} onRetry={() => refreshDatabase()} /> : null}
          {screen === 'sources' && <SourcesScreen />}
          {screen === 'model' && <ModelScreen />}
          {screen === 'segments' && <SegmentsScreen />}
          {screen === 'certainty' && <CertaintyScreen />}
          {screen === 'review' && <ReviewScreen />}
          {screen === 'movement' && <MovementScreen />}
          {screen === 'export' && <ExportScreen />}
        </main>
      </div>
    </WorkspaceContext.Provider>
  );
}

/**
 * The warnings stored with the run in view (e.g. nearly collinear features), beside the run
 * picker so they are seen on every screen; a click opens the Model screen, which lists them.
 * Re-read when the run's segments are (a regroup or a review decision may change the run).
 */
function RunWarnings({ runId, version, onOpen }: { runId: number; version: number; onOpen: () => void }) {
  const api = useApi();
  const summary = useLoad(() => api.runSummary({ runId }), `run-warnings:${runId}:${version}`);
  const warnings = summary.data && summary.data.runId === runId ? summary.data.warnings : [];
  if (!warnings.length) return null;
  return (
    <button type="button" className="run-warnings" title={warnings.join('\n')} onClick={onOpen} data-testid="run-warnings">
      {warnings.length === 1 ? '1 warning' : `${warnings.length} warnings`}
    </button>
  );
}
