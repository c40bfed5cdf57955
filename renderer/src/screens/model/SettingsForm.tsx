/*
 * The Model screen's settings form: one field per run setting of the contract. Test ids:
 * model-as-of, model-window, model-mode, model-min-purchases, model-min-tenure,
 * model-fresh-categories, model-feature-<feature>, model-transform-<feature>-<log1p|cubeRoot|clip|zScore>,
 * model-clip-lower-<feature>, model-clip-upper-<feature>, model-k-mode, model-k, model-k-min,
 * model-k-max, model-criterion, model-covariance, model-segment-mode, model-segment-count,
 * model-restarts, model-seed, model-init, model-tol, model-max-iter, model-reg, model-fit-sample,
 * model-borderline-confidence, model-borderline-margin, model-atypical, model-movers,
 * model-movers-below, model-review-capacity, model-start.
 */
import type { CovarianceType, InitMethod, ModelOptions } from '../../../../src/api/contract.js';
import { useWorkspace } from '../../app/workspace.js';
import { structureLabels } from '../../charts/model-charts.js';
import type { FormErrors, ModelForm } from '../../lib/model-form.js';

type TransformToggle = 'log1p' | 'cubeRoot' | 'clip' | 'zScore';
/** In the order the core applies them; log(1 + x) and the cube root are one step, so at most one is on. */
const transformToggles: { key: TransformToggle; label: string }[] = [
  { key: 'log1p', label: 'log(1 + x)' },
  { key: 'cubeRoot', label: 'cube root' },
  { key: 'clip', label: 'clip tails' },
  { key: 'zScore', label: 'standardise' },
];

/** A toggle's change; turning on one shaping step (log or cube root) turns the other off. */
function transformChange(key: TransformToggle, on: boolean): Partial<Record<TransformToggle, boolean>> {
  if (on && key === 'log1p') return { log1p: true, cubeRoot: false };
  if (on && key === 'cubeRoot') return { cubeRoot: true, log1p: false };
  return { [key]: on };
}

/** Every start method the contract offers, in words (the type makes the list complete). */
const initLabels: Record<InitMethod, string> = {
  mixed: 'mixed: hierarchical, then k-means and random partitions in turn',
  hierarchical: 'model-based hierarchical agglomeration',
  kmeans: 'k-means from k-means++ seeds',
  'kmeans++': 'k-means++ seeds alone',
  random: 'random points',
  'random-partition': 'random partitions',
};

interface SettingsFormProps {
  options: ModelOptions;
  form: ModelForm;
  errors: FormErrors;
  running: boolean;
  onChange: (form: ModelForm) => void;
  onSubmit: () => void;
}

export function SettingsForm({ options, form, errors, running, onChange, onSubmit }: SettingsFormProps) {
  const { database, featureLabel } = useWorkspace();
  const set = <K extends keyof ModelForm>(key: K, value: ModelForm[K]) => onChange({ ...form, [key]: value });
  const setFeature = (feature: string, change: Partial<ModelForm['features'][number]>) =>
    onChange({ ...form, features: form.features.map((choice) => (choice.feature === feature ? { ...choice, ...change } : choice)) });

  const field = (key: string) => (errors[key] ? <span className="field-error" role="alert">{errors[key]}</span> : null);
  const textInput = (key: keyof ModelForm & string, testId: string, label: string, hint?: string) => (
    <label className="field">
      <span>{label}</span>
      <input inputMode="decimal" value={String(form[key])} onChange={(e) => set(key, e.target.value as never)} aria-invalid={Boolean(errors[key])} data-testid={testId} />
      {hint ? <span className="hint">{hint}</span> : null}
      {field(key)}
    </label>
  );

  return (
    <form
      className="panel model-form"
      onSubmit={(event) => {
        event.preventDefault();
        onSubmit();
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
          {textInput('windowMonths', 'model-window', 'window (months)')}
          <label className="field">
            <span>refresh</span>
            <select value={form.mode} onChange={(e) => set('mode', e.target.value as ModelForm['mode'])} data-testid="model-mode">
              <option value="refit">refit: fit anew, carry names over</option>
              <option value="rescore">rescore: last month's model on new data</option>
            </select>
            {field('mode')}
          </label>
          {textInput('minPurchases', 'model-min-purchases', 'too new: fewer purchases than')}
          {textInput('minTenureMonths', 'model-min-tenure', 'or tenure under (months)')}
          <label className="field">
            <span>departments counted as fresh</span>
            <input value={form.freshCategories} onChange={(e) => set('freshCategories', e.target.value)} aria-invalid={Boolean(errors.freshCategories)} data-testid="model-fresh-categories" />
            <span className="hint">comma-separated, as the receipts name them</span>
            {field('freshCategories')}
          </label>
        </div>
      </fieldset>

      <fieldset>
        <legend>Features and transforms</legend>
        {field('features')}
        <div className="feature-list">
          {form.features.map((choice) => (
            <div key={choice.feature} className={choice.selected ? 'feature-row is-on' : 'feature-row'}>
              <label className="check" title={options.features.find((option) => option.name === choice.feature)?.meaning}>
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
                      onChange={(e) => setFeature(choice.feature, transformChange(toggle.key, e.target.checked))}
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
        <p className="hint">
          Spend per month is visits × basket: next to both it adds no information and tilts full covariances. A nearly collinear set is named
          in a warning with the feature to drop.
        </p>
      </fieldset>

      <fieldset>
        <legend>Mixture components</legend>
        <div className="form-grid">
          <label className="field">
            <span>number of components k</span>
            <select value={form.kMode} onChange={(e) => set('kMode', e.target.value as ModelForm['kMode'])} data-testid="model-k-mode">
              <option value="auto">choose by criterion</option>
              <option value="fixed">fixed</option>
            </select>
          </label>
          {form.kMode === 'fixed' ? (
            textInput('k', 'model-k', 'k')
          ) : (
            <>
              {textInput('kMin', 'model-k-min', 'smallest k')}
              {textInput('kMax', 'model-k-max', 'largest k')}
            </>
          )}
          <label className="field">
            <span>criterion</span>
            <select value={form.criterion} onChange={(e) => set('criterion', e.target.value as ModelForm['criterion'])} data-testid="model-criterion">
              <option value="bic">BIC</option>
              <option value="icl">ICL (prefers well-separated components)</option>
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
      </fieldset>

      <fieldset>
        <legend>Segments</legend>
        <div className="form-grid">
          <label className="field">
            <span>number of segments</span>
            <select value={form.segmentMode} onChange={(e) => set('segmentMode', e.target.value as ModelForm['segmentMode'])} data-testid="model-segment-mode">
              <option value="auto">automatic (entropy)</option>
              <option value="fixed">fixed number</option>
            </select>
          </label>
          {form.segmentMode === 'fixed' ? textInput('segmentCount', 'model-segment-count', 'segments', 'at most the number of components') : null}
        </div>
        <p className="hint">
          Components that overlap are combined, two at a time, where combining them makes customers' memberships most certain (the entropy
          criterion), while customers are unsure between the two. After the fit you can pick another level, or merge and split segments by hand.
        </p>
      </fieldset>

      <fieldset>
        <legend>Fitting</legend>
        <div className="form-grid">
          {textInput('restarts', 'model-restarts', 'restarts', 'best log-likelihood kept')}
          {textInput('seed', 'model-seed', 'seed', 'same seed, same run')}
          <label className="field field-wide">
            <span>how each start is seeded</span>
            <select value={form.init} onChange={(e) => set('init', e.target.value as InitMethod)} data-testid="model-init">
              {(Object.keys(initLabels) as InitMethod[]).map((method) => (
                <option key={method} value={method}>
                  {initLabels[method]}
                </option>
              ))}
            </select>
            {field('init')}
          </label>
          {textInput('tol', 'model-tol', 'convergence tolerance', 'mean log-likelihood: EM stops when a step gains less, and so does the rest it projects; e.g. 1e-3')}
          {textInput('maxIterations', 'model-max-iter', 'most iterations per start')}
          {textInput('regularization', 'model-reg', 'covariance regularisation', 'added to the diagonal, e.g. 1e-6')}
          {textInput('fitSample', 'model-fit-sample', 'fit on a sample of (customers)', 'empty: fit on all; a seeded sample, then everyone is scored')}
        </div>
      </fieldset>

      <fieldset>
        <legend>Flags for review</legend>
        <div className="form-grid">
          {textInput('borderlineConfidence', 'model-borderline-confidence', 'borderline below confidence')}
          {textInput('borderlineMargin', 'model-borderline-margin', 'or margin below')}
          {textInput('atypicalPercentile', 'model-atypical', 'atypical below density percentile')}
          <div className="field">
            <label className="check check-inline">
              <input type="checkbox" checked={form.moversOn} onChange={(e) => set('moversOn', e.target.checked)} data-testid="model-movers" />
              <span>also flag movers below confidence</span>
            </label>
            <input
              inputMode="decimal"
              value={form.moversBelow}
              disabled={!form.moversOn}
              onChange={(e) => set('moversBelow', e.target.value)}
              aria-label="confidence below which a customer who changed segment is flagged"
              aria-invalid={Boolean(errors.moversBelow)}
              data-testid="model-movers-below"
            />
            {field('moversBelow')}
          </div>
          {textInput('reviewCapacity', 'model-review-capacity', 'review capacity (customers)', 'what one person can review this month')}
        </div>
      </fieldset>
      {field('form')}
      <button type="submit" className="button button-primary" disabled={running} data-testid="model-start">
        Fit and store a run
      </button>
    </form>
  );
}
