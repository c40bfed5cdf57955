/*
 * Model screen. Test ids: screen-model, model-as-of, model-window, model-mode,
 * model-feature-<feature>, model-transform-<feature>-<log1p|clip|zScore>,
 * model-clip-lower-<feature>, model-clip-upper-<feature>,
 * model-k-mode, model-k, model-k-min, model-k-max, model-covariance,
 * model-criterion, model-restarts, model-seed, model-borderline-confidence,
 * model-borderline-margin, model-atypical, model-min-purchases, model-min-tenure, model-start,
 * model-task (with -bar, -cancel, -dismiss), model-criterion-chart, model-sweep-caption.
 */
import { useEffect, useMemo, useState } from 'react';
import type { CovarianceType, ModelOptions, RunDetail, RunSummary } from '../../../src/api/contract.js';
import { useApi, useFormat, useLoad, useTask } from '../app/client-context.js';
import { useWorkspace } from '../app/workspace.js';
import { bestRow, criterionOption, structureLabels } from '../charts/model-charts.js';
import { Chart } from '../components/Chart.js';
import { ErrorNote, Loading } from '../components/Notice.js';
import { TaskPanel } from '../components/TaskPanel.js';
import { errorsFromIssues, formFromSettings, toStartRunInput, type FormErrors, type ModelForm } from '../lib/model-form.js';

type TransformToggle = 'log1p' | 'clip' | 'zScore';
/** In the order the core applies them. */
const transformToggles: { key: TransformToggle; label: string }[] = [
  { key: 'log1p', label: 'log(1 + x)' },
  { key: 'clip', label: 'clip tails' },
  { key: 'zScore', label: 'standardise' },
];

export function ModelScreen() {
  const { modelOptions, runId, database, refreshDatabase } = useWorkspace();
  const api = useApi();
  const run = useLoad(runId === null ? null : () => api.runSummary({ runId }), `run:${runId}`);
  // The fit outlives the form: when it ends the new run is selected and the form refills from
  // it, while the outcome stays on screen.
  const task = useTask<'startRun'>(() => refreshDatabase(true));
  const current = run.data && run.data.runId === runId ? run.data : null;
  // Without a run the as-of date comes from the database summary, so wait for that too.
  if (!modelOptions || (runId !== null && !current && !run.error) || (runId === null && !database)) {
    return <section className="screen" data-testid="screen-model"><h1>Model</h1><Loading what="model settings" /></section>;
  }
  const asOf = current?.asOf ?? database?.lastDataDate ?? '';
  return <ModelView key={`${runId}`} options={modelOptions} previous={current} asOf={asOf} task={task} />;
}

function ModelView({ options, previous, asOf, task }: { options: ModelOptions; previous: RunDetail | null; asOf: string; task: ReturnType<typeof useTask<'startRun'>> }) {
  const api = useApi();
  const format = useFormat();
  const { runId, database, featureLabel } = useWorkspace();
  const [form, setForm] = useState<ModelForm>(() => formFromSettings(options, previous?.settings ?? options.defaults, asOf));
  const [errors, setErrors] = useState<FormErrors>({});
  useEffect(() => {
    if (task.view.state === 'failed') setErrors(errorsFromIssues(task.view.error.issues, form));
    // Map issues once per failure; the form itself may change afterwards.
  }, [task.view]);

  const sweep = useLoad(runId === null ? null : () => api.sweepTable({ runId }), `sweep:${runId}`);
  const criterion = previous?.criterion ?? 'bic';
  const chart = useMemo(() => (sweep.data && sweep.data.length ? criterionOption(sweep.data, criterion, format) : null), [sweep.data, criterion, format]);
  const best = sweep.data ? bestRow(sweep.data, criterion) : null;
  const chosen = sweep.data?.find((row) => row.chosen) ?? null;

  const set = <K extends keyof ModelForm>(key: K, value: ModelForm[K]) => setForm((current) => ({ ...current, [key]: value }));
  const setFeature = (feature: string, change: Partial<ModelForm['features'][number]>) =>
    setForm((current) => ({ ...current, features: current.features.map((choice) => (choice.feature === feature ? { ...choice, ...change } : choice)) }));
  const start = () => {
    const { input, errors: found } = toStartRunInput(form);
    setErrors(found);
    if (Object.keys(found).length) return;
    task.start(() => api.startRun(input));
  };

  const running = task.view.state === 'running' || task.view.state === 'starting';
  const field = (key: string) => (errors[key] ? <span className="field-error" role="alert">{errors[key]}</span> : null);
  const numberInput = (key: keyof ModelForm & string, testId: string, label: string, hint?: string) => (
    <label className="field">
      <span>{label}</span>
      <input inputMode="decimal" value={String(form[key])} onChange={(e) => set(key, e.target.value as never)} aria-invalid={Boolean(errors[key])} data-testid={testId} />
      {hint ? <span className="hint">{hint}</span> : null}
      {field(key)}
    </label>
  );

  return (
    <section className="screen" data-testid="screen-model">
      <header className="screen-head">
        <h1>Model</h1>
        <p className="lede">
          Choose the features and the mixture to fit, then run. {previous ? `Filled in from run #${previous.runId}.` : 'Filled in with the defaults.'}
        </p>
      </header>
      <div className="model-layout">
        <form
          className="panel model-form"
          onSubmit={(event) => {
            event.preventDefault();
            start();
          }}
        >
          <fieldset>
            <legend>Data</legend>
            <div className="form-grid">
              <label className="field">
                <span>as of</span>
                <input type="date" value={form.asOf} onChange={(e) => set('asOf', e.target.value)} max={database?.lastDataDate ?? undefined} data-testid="model-as-of" />
                {field('asOf')}
              </label>
              {numberInput('windowMonths', 'model-window', 'window (months)')}
              <label className="field">
                <span>refresh</span>
                <select value={form.mode} onChange={(e) => set('mode', e.target.value as ModelForm['mode'])} data-testid="model-mode">
                  <option value="refit">refit: fit anew, carry names over</option>
                  <option value="rescore">rescore: last month's model on new data</option>
                </select>
                {field('mode')}
              </label>
            </div>
          </fieldset>

          <fieldset>
            <legend>Features and transforms</legend>
            {field('features')}
            <div className="feature-list">
              {form.features.map((choice) => (
                <div key={choice.feature} className={choice.selected ? 'feature-row is-on' : 'feature-row'}>
                  <label className="check">
                    <input type="checkbox" checked={choice.selected} onChange={(e) => setFeature(choice.feature, { selected: e.target.checked })} data-testid={`model-feature-${choice.feature}`} />
                    {featureLabel(choice.feature)}
                  </label>
                  <span className="transforms">
                    {transformToggles.map((toggle) => (
                      <label key={toggle.key} className="check check-small">
                        <input
                          type="checkbox"
                          disabled={!choice.selected}
                          checked={choice[toggle.key]}
                          onChange={(e) => setFeature(choice.feature, { [toggle.key]: e.target.checked })}
                          data-testid={`model-transform-${choice.feature}-${toggle.key}`}
                        />
                        {toggle.label}
                      </label>
                    ))}
                    {choice.clip && choice.selected ? (
                      <span className="check-small">
                        below
                        <input className="narrow" value={choice.clipLower} onChange={(e) => setFeature(choice.feature, { clipLower: e.target.value })} aria-label={`lower clipping percentile for ${featureLabel(choice.feature)}`} data-testid={`model-clip-lower-${choice.feature}`} />
                        and above
                        <input className="narrow" value={choice.clipUpper} onChange={(e) => setFeature(choice.feature, { clipUpper: e.target.value })} aria-label={`upper clipping percentile for ${featureLabel(choice.feature)}`} data-testid={`model-clip-upper-${choice.feature}`} />
                        th pct.
                      </span>
                    ) : null}
                  </span>
                  {field(`features.${choice.feature}`)}
                </div>
              ))}
            </div>
          </fieldset>

          <fieldset>
            <legend>Mixture</legend>
            <div className="form-grid">
              <label className="field">
                <span>number of segments</span>
                <select value={form.kMode} onChange={(e) => set('kMode', e.target.value as ModelForm['kMode'])} data-testid="model-k-mode">
                  <option value="auto">choose by criterion</option>
                  <option value="fixed">fixed</option>
                </select>
              </label>
              {form.kMode === 'fixed' ? numberInput('k', 'model-k', 'k') : (
                <>
                  {numberInput('kMin', 'model-k-min', 'smallest k')}
                  {numberInput('kMax', 'model-k-max', 'largest k')}
                </>
              )}
              <label className="field">
                <span>criterion</span>
                <select value={form.criterion} onChange={(e) => set('criterion', e.target.value as ModelForm['criterion'])} data-testid="model-criterion">
                  <option value="bic">BIC</option>
                  <option value="icl">ICL (prefers well-separated segments)</option>
                </select>
              </label>
            </div>
            <label className="field">
              <span>covariance structure</span>
              <select value={form.covariance} onChange={(e) => set('covariance', e.target.value as ModelForm['covariance'])} data-testid="model-covariance">
                <option value="auto">try all four, choose by criterion</option>
                {options.covarianceTypes.map((structure: CovarianceType) => (
                  <option key={structure} value={structure}>
                    {structureLabels[structure]} only
                  </option>
                ))}
              </select>
            </label>
            {field('covariance')}
            <div className="form-grid">
              {numberInput('restarts', 'model-restarts', 'restarts', 'best log-likelihood kept')}
              {numberInput('seed', 'model-seed', 'seed', 'same seed, same run')}
            </div>
          </fieldset>

          <fieldset>
            <legend>Flags</legend>
            <div className="form-grid">
              {numberInput('borderlineConfidence', 'model-borderline-confidence', 'borderline below confidence')}
              {numberInput('borderlineMargin', 'model-borderline-margin', 'or margin below')}
              {numberInput('atypicalPercentile', 'model-atypical', 'atypical below density percentile')}
              {numberInput('minPurchases', 'model-min-purchases', 'too new: fewer purchases than')}
              {numberInput('minTenureMonths', 'model-min-tenure', 'or tenure under (months)')}
            </div>
          </fieldset>
          {field('form')}
          <button type="submit" className="button button-primary" disabled={running} data-testid="model-start">
            Fit and store a run
          </button>
        </form>

        <div className="model-side">
          <TaskPanel<RunSummary>
            view={task.view}
            title="Fitting"
            testId="model-task"
            format={format}
            onCancel={task.cancel}
            onDismiss={task.dismiss}
            describeResult={(result) => (
              <p>
                Run #{result.runId}: {result.k} segments ({structureLabels[result.covariance]}), {format.count(result.customers)} customers placed,
                {' '}{format.count(result.tooNew)} too new, {format.count(result.borderline)} borderline, {format.count(result.atypical)} atypical.
              </p>
            )}
          />
          <div className="panel">
            <h2>Information criterion over k</h2>
            {sweep.error ? <ErrorNote error={sweep.error} onRetry={sweep.reload} /> : null}
            {chart ? (
              <>
                <Chart option={chart} label="Information criterion by number of segments for each covariance structure" height={340} testId="model-criterion-chart" />
                <p className="caption" data-testid="model-sweep-caption">
                  Run #{runId}, {criterion.toUpperCase()}: lower is better.{' '}
                  {chosen ? `Chosen: k = ${chosen.k}, ${structureLabels[chosen.covariance]} (ringed).` : ''}
                  {best && chosen && (best.k !== chosen.k || best.covariance !== chosen.covariance)
                    ? ` The lowest value is at k = ${best.k}, ${structureLabels[best.covariance]}.`
                    : ''}
                </p>
              </>
            ) : sweep.loading ? (
              <Loading what="the sweep" />
            ) : (
              <p className="quiet">{runId === null ? 'Fit a run to see the criterion for each k and structure.' : 'This run used a fixed k and structure, so there is no sweep to show.'}</p>
            )}
          </div>
        </div>
      </div>
    </section>
  );
}
