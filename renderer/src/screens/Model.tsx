/*
 * Model screen: the settings form (model/SettingsForm.tsx), fit progress, the run's warnings,
 * the model choice (model/SweepPanel.tsx), and how the components combine into segments
 * (model/CombiningPanel.tsx). Test ids: screen-model, model-task (with -bar, -cancel, -dismiss),
 * model-result, model-warnings.
 */
import { useEffect, useState } from 'react';
import type { ModelOptions, RunDetail, RunSummary } from '../../../src/api/contract.js';
import { useApi, useFormat, useLoad, useTask } from '../app/client-context.js';
import { useWorkspace } from '../app/workspace.js';
import { structureLabels } from '../charts/model-charts.js';
import { Loading } from '../components/Notice.js';
import { countOf } from '../lib/format.js';
import { TaskPanel } from '../components/TaskPanel.js';
import { errorsFromIssues, formFromSettings, toStartRunInput, type FormErrors, type ModelForm } from '../lib/model-form.js';
import { SettingsForm } from './model/SettingsForm.js';
import { CombiningPanel } from './model/CombiningPanel.js';
import { SweepPanel } from './model/SweepPanel.js';

export function ModelScreen() {
  const { modelOptions, runId, database, refreshDatabase } = useWorkspace();
  const api = useApi();
  const run = useLoad(runId === null ? null : () => api.runSummary({ runId }), `run:${runId}`);
  // The fit outlives the form: when it ends the new run is selected and the form refills from
  // it, while the outcome stays on screen.
  const task = useTask<'startRun'>(() => refreshDatabase(true));
  const current = run.data && run.data.runId === runId ? run.data : null;
  const reloadRun = run.reload;
  // Without a run the as-of date comes from the database summary, so wait for that too.
  if (!modelOptions || (runId !== null && !current && !run.error) || (runId === null && !database)) {
    return <section className="screen" data-testid="screen-model"><h1>Model</h1><Loading what="model settings" /></section>;
  }
  const asOf = current?.asOf ?? database?.lastDataDate ?? '';
  return <ModelView key={`${runId}`} options={modelOptions} previous={current} asOf={asOf} task={task} onRegrouped={reloadRun} />;
}

interface ModelViewProps {
  options: ModelOptions;
  previous: RunDetail | null;
  asOf: string;
  task: ReturnType<typeof useTask<'startRun'>>;
  onRegrouped: () => void;
}

function ModelView({ options, previous, asOf, task, onRegrouped }: ModelViewProps) {
  const api = useApi();
  const format = useFormat();
  const { runId } = useWorkspace();
  const [form, setForm] = useState<ModelForm>(() => formFromSettings(options, previous?.settings ?? options.defaults, asOf));
  const [errors, setErrors] = useState<FormErrors>({});
  useEffect(() => {
    if (task.view.state === 'failed') setErrors(errorsFromIssues(task.view.error.issues, form));
    // Map issues once per failure; the form itself may change afterwards.
  }, [task.view]);

  const start = () => {
    const { input, errors: found } = toStartRunInput(form);
    setErrors(found);
    if (Object.keys(found).length) return;
    task.start(() => api.startRun(input));
  };
  const running = task.view.state === 'running' || task.view.state === 'starting';

  return (
    <section className="screen" data-testid="screen-model">
      <header className="screen-head">
        <h1>Model</h1>
        <p className="lede">
          Choose the features and the mixture to fit, then run. The criterion picks the Gaussian components; components that overlap are
          combined into the segments you act on. {previous ? `Filled in from run #${previous.runId}.` : 'Filled in with the defaults.'}
        </p>
      </header>
      <div className="model-layout">
        <SettingsForm options={options} form={form} errors={errors} running={running} onChange={setForm} onSubmit={start} />
        <div className="model-side">
          <TaskPanel<RunSummary>
            view={task.view}
            title="Fitting"
            testId="model-task"
            format={format}
            onCancel={task.cancel}
            onDismiss={task.dismiss}
            describeResult={(result) => (
              <div data-testid="model-result">
                <p>
                  Run #{result.runId}: {countOf(result.segmentCount, 'segment', format)} from {countOf(result.k, 'component', format)} ({structureLabels[result.covariance]}),{' '}
                  {format.count(result.customers)} customers placed, {format.count(result.tooNew)} too new, {format.count(result.borderline)} borderline,{' '}
                  {format.count(result.atypical)} atypical; {format.count(result.review.queued)} of {format.count(result.review.flagged)} flagged in the review queue.
                </p>
                {result.warnings.length ? (
                  <ul className="warnings">
                    {result.warnings.map((warning) => (
                      <li key={warning}>{warning}</li>
                    ))}
                  </ul>
                ) : null}
              </div>
            )}
          />
          {previous && previous.warnings.length ? (
            <div className="panel panel-warn" data-testid="model-warnings">
              <h2>Warnings of run #{previous.runId}</h2>
              <ul className="warnings">
                {previous.warnings.map((warning) => (
                  <li key={warning}>{warning}</li>
                ))}
              </ul>
            </div>
          ) : null}
          <SweepPanel runId={runId} criterion={previous?.criterion ?? 'bic'} />
          {runId !== null ? (
            <CombiningPanel
              runId={runId}
              onRegrouped={() => {
                // The fit's outcome no longer describes the run's segments; the regroup says what it changed.
                if (task.view.state === 'done') task.dismiss();
                onRegrouped();
              }}
            />
          ) : null}
        </div>
      </div>
    </section>
  );
}
