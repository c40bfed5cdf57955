/*
 * The Export screen's "Score in your own database" section: the run's scoring query (the API's
 * modelSql, as `spendmix model-sql` prints it) for the chain's own SQL engine, with a copy button
 * and a save (desktop: a save dialog; browser: the host writes the file for one download).
 * Test ids: model-sql, model-sql-dialect, model-sql-table, model-sql-show, model-sql-error,
 * model-sql-needs, model-sql-query, model-sql-copy, model-sql-copied, model-sql-save,
 * model-sql-saved (data-state="saving|saved|failed").
 */
import { useRef, useState } from 'react';
import type { ApiError, ModelSqlResult, SqlDialectName } from '../../../src/api/contract.js';
import { useApi, useClient } from '../app/client-context.js';
import { useWorkspace } from '../app/workspace.js';
import { ErrorNote } from '../components/Notice.js';
import { toApiError } from '../lib/task-state.js';

/** Every engine the query is written for (the contract's list; a new one fails the type check here). */
const engineNames: Record<SqlDialectName, string> = { duckdb: 'DuckDB', postgres: 'PostgreSQL', sqlite: 'SQLite' };

type Status = { state: 'saving' | 'saved' | 'failed'; message: string } | null;

/** Copies text to the clipboard; where the clipboard API is missing or refused, through a selection. */
async function copyText(text: string, fallbackNode: HTMLElement | null): Promise<void> {
  try {
    await navigator.clipboard.writeText(text);
    return;
  } catch {
    // Falls through to the selection below.
  }
  const selection = window.getSelection();
  if (!fallbackNode || !selection) throw new Error('the clipboard is not available here; select the query and copy it');
  const range = document.createRange();
  range.selectNodeContents(fallbackNode);
  selection.removeAllRanges();
  selection.addRange(range);
  if (!document.execCommand('copy')) throw new Error('the clipboard is not available here; the query is selected, copy it with Ctrl+C');
}

export function ScoreInDatabase({ runId }: { runId: number }) {
  const api = useApi();
  const client = useClient();
  const { featureLabel } = useWorkspace();
  const [dialect, setDialect] = useState<SqlDialectName>('duckdb');
  const [table, setTable] = useState('customer_features');
  const [query, setQuery] = useState<ModelSqlResult | null>(null);
  const [error, setError] = useState<ApiError | null>(null);
  const [busy, setBusy] = useState(false);
  const [copied, setCopied] = useState<string | null>(null);
  const [saved, setSaved] = useState<Status>(null);
  const queryNode = useRef<HTMLPreElement>(null);
  const inBrowser = client.shell.kind === 'browser';

  const show = async () => {
    setBusy(true);
    setError(null);
    setCopied(null);
    setSaved(null);
    try {
      setQuery(await api.modelSql({ runId, dialect, featuresTable: table }));
    } catch (failure) {
      setQuery(null);
      setError(toApiError(failure));
    } finally {
      setBusy(false);
    }
  };

  const copy = async () => {
    if (!query) return;
    try {
      await copyText(query.sql, queryNode.current);
      setCopied('Copied to the clipboard.');
    } catch (failure) {
      setCopied(`Not copied: ${(failure as Error).message}.`);
    }
  };

  // The shown query is saved as it was asked for, whatever the fields say since.
  const save = async () => {
    if (!query) return;
    const name = `spendmix-run-${query.runId}-${query.dialect}.sql`;
    setSaved(null);
    try {
      const out = inBrowser ? name : await client.shell.chooseSavePath({ title: 'Save the scoring query', defaultName: name, extensions: ['sql'] });
      if (!out) return;
      setSaved({ state: 'saving', message: `Saving ${name}…` });
      const written = await api.modelSql({ runId: query.runId, dialect: query.dialect, featuresTable: query.featuresTable, out });
      await client.shell.deliverExport({ out: written.out! });
      setSaved({ state: 'saved', message: inBrowser ? `Downloaded ${name} to your browser's downloads.` : `Saved to ${written.out}.` });
    } catch (failure) {
      setSaved({ state: 'failed', message: `Not saved: ${toApiError(failure).message}` });
    }
  };

  return (
    <section className="panel score-sql" data-testid="model-sql" aria-labelledby="model-sql-title">
      <h2 id="model-sql-title">Score in your own database</h2>
      <p className="lede">
        For a chain whose customers live in its own SQL engine: this run's model written out as one query (the same transforms,
        components, segments and thresholds as here), so every customer can be labelled where the data is, without exporting it.
      </p>
      <div className="inline-controls">
        <label>
          SQL engine
          <select value={dialect} onChange={(e) => setDialect(e.target.value as SqlDialectName)} data-testid="model-sql-dialect">
            {(Object.keys(engineNames) as SqlDialectName[]).map((name) => (
              <option key={name} value={name}>
                {engineNames[name]}
              </option>
            ))}
          </select>
        </label>
        <label>
          features table
          <input value={table} onChange={(e) => setTable(e.target.value)} spellCheck={false} data-testid="model-sql-table" />
        </label>
        <button type="button" className="button" onClick={show} disabled={busy || !table.trim()} data-testid="model-sql-show">
          Write the query
        </button>
      </div>
      {error ? <div data-testid="model-sql-error"><ErrorNote error={error} /></div> : null}
      {query ? (
        <>
          <div className="score-sql-needs" data-testid="model-sql-needs">
            <p>
              It reads the table <code>{query.featuresTable}</code>: one row per customer with <code>customer_id</code> and these
              columns, in original units (as the app shows them, not log-transformed or scaled):
            </p>
            <ul>
              {query.features.map((feature) => (
                <li key={feature}>
                  <code>{feature}</code> <span className="quiet">{featureLabel(feature)}</span>
                </li>
              ))}
            </ul>
            <p>
              It returns {query.columns.map((column, i) => (
                <span key={column}>
                  {i > 0 ? ', ' : ''}
                  <code>{column}</code>
                </span>
              ))}{' '}
              for each row ({query.segments.length} segments from {query.components} components). A row with an empty feature is{' '}
              {query.emptyValues}. Score only the customers with enough history (with the feature query&apos;s table:{' '}
              <code>WHERE too_new = 0</code>); the app does not place the others either.
            </p>
          </div>
          <div className="score-sql-actions">
            <button type="button" className="button-quiet" onClick={copy} data-testid="model-sql-copy">
              Copy
            </button>
            <button type="button" className="button-quiet" onClick={save} disabled={saved?.state === 'saving'} data-testid="model-sql-save">
              {inBrowser ? 'Download .sql' : 'Save .sql…'}
            </button>
            {copied ? <span className="quiet" data-testid="model-sql-copied" aria-live="polite">{copied}</span> : null}
            {saved ? (
              <span className={saved.state === 'failed' ? 'problem' : 'quiet'} data-testid="model-sql-saved" data-state={saved.state} aria-live="polite">
                {saved.message}
              </span>
            ) : null}
          </div>
          <pre className="sql-text" ref={queryNode} tabIndex={0} aria-label={`Scoring query for ${engineNames[query.dialect]}`} data-testid="model-sql-query">
            {query.sql}
          </pre>
        </>
      ) : null}
    </section>
  );
}
