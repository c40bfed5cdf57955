import type { ApiInput, CovarianceType, FeatureOption, FeatureTransformSpec, InitMethod, ModelOptions, RunSettings } from '../../../src/api/contract.js';

/**
 * The Model screen's settings form. Text boxes hold strings; this turns them into the startRun
 * input. Range checks live in the core's schema (one source of truth): its issues come back by
 * field path and are shown beside the field, so here we only refuse what is not a number.
 */
export interface FeatureChoice {
  feature: string;
  selected: boolean;
  /** Applied in this order by the core: log(1 + x) or the cube root, clipping at percentiles, z-score. */
  log1p: boolean;
  cubeRoot: boolean;
  clip: boolean;
  clipLower: string;
  clipUpper: string;
  zScore: boolean;
}

/**
 * Settings the form does not show, kept as they were: where the features come from (the options
 * list only the features computed from receipts, so the form cannot offer an imported table's).
 */
export type CarriedSettings = Pick<RunSettings, 'source'>;

export interface ModelForm {
  asOf: string;
  windowMonths: string;
  mode: 'refit' | 'rescore';
  features: FeatureChoice[];
  kMode: 'auto' | 'fixed';
  k: string;
  kMin: string;
  kMax: string;
  /** One structure, or 'auto' to sweep all four. */
  covariance: CovarianceType | 'auto';
  /** Segments the components are combined into: automatic (where the entropy curve flattens), or a number. */
  segmentMode: 'auto' | 'fixed';
  segmentCount: string;
  criterion: 'bic' | 'icl';
  restarts: string;
  seed: string;
  init: InitMethod;
  tol: string;
  maxIterations: string;
  regularization: string;
  /** Departments counted as fresh, comma-separated as typed. */
  freshCategories: string;
  borderlineConfidence: string;
  borderlineMargin: string;
  atypicalPercentile: string;
  minPurchases: string;
  minTenureMonths: string;
  /** Also queue customers who changed segment with confidence below `moversBelow`. */
  moversOn: boolean;
  moversBelow: string;
  /** Customers one person can review this month. */
  reviewCapacity: string;
  /** Fit on a seeded sample of this many placed customers (empty: all of them); everyone is scored. */
  fitSample: string;
  carried: CarriedSettings;
}

const text = (value: number) => String(value);

/** The form filled with the core's defaults (or a previous run's settings) for a given as-of date. */
export function formFromSettings(options: ModelOptions, settings: RunSettings, asOf: string): ModelForm {
  const chosen = new Map((settings.features ?? []).map((spec) => [spec.feature, spec]));
  const features = options.features.map((option: FeatureOption): FeatureChoice => {
    const spec: Partial<FeatureTransformSpec> = chosen.get(option.name) ?? option.defaultTransform;
    const lower = spec.clipLowerPercentile ?? null;
    const upper = spec.clipUpperPercentile ?? null;
    return {
      feature: option.name,
      selected: settings.features ? chosen.has(option.name) : option.inDefaultSet,
      log1p: Boolean(spec.log1p),
      cubeRoot: Boolean(spec.cubeRoot),
      clip: lower !== null || upper !== null,
      clipLower: lower === null ? '1' : String(lower),
      clipUpper: upper === null ? '99' : String(upper),
      zScore: spec.zScore ?? true,
    };
  });
  return {
    asOf,
    windowMonths: text(settings.windowMonths),
    mode: settings.mode,
    features,
    kMode: settings.k === 'auto' ? 'auto' : 'fixed',
    k: settings.k === 'auto' ? '4' : String(settings.k),
    kMin: text(settings.kMin),
    kMax: text(settings.kMax),
    covariance: settings.covariance,
    segmentMode: settings.segmentCount === 'auto' ? 'auto' : 'fixed',
    segmentCount: settings.segmentCount === 'auto' ? '4' : String(settings.segmentCount),
    criterion: settings.criterion,
    restarts: text(settings.restarts),
    seed: text(settings.seed),
    init: settings.init,
    tol: text(settings.tol),
    maxIterations: text(settings.maxIterations),
    regularization: text(settings.regularization),
    freshCategories: settings.freshCategories.join(', '),
    borderlineConfidence: text(settings.borderlineConfidence),
    borderlineMargin: text(settings.borderlineMargin),
    atypicalPercentile: text(settings.atypicalPercentile),
    minPurchases: text(settings.minPurchases),
    minTenureMonths: text(settings.minTenureMonths),
    moversOn: settings.reviewMoversBelowConfidence !== null,
    moversBelow: text(settings.reviewMoversBelowConfidence ?? 0.6),
    reviewCapacity: text(settings.reviewCapacity),
    fitSample: settings.fitSample === null ? '' : text(settings.fitSample),
    carried: { source: settings.source },
  };
}

export type FormErrors = Partial<Record<string, string>>;

/**
 * Reads a number typed in any locale's style ("0,7" as well as "0.7"). Powers of ten ("1e-6")
 * only where asked for (tolerances): elsewhere "1e3" is more likely a slip than a thousand.
 */
export function readNumber(raw: string, { exponent = false } = {}): number | null {
  const trimmed = raw.trim().replace(',', '.');
  const pattern = exponent ? /^-?\d+(\.\d+)?([eE][-+]?\d+)?$/ : /^-?\d+(\.\d+)?$/;
  if (!pattern.test(trimmed)) return null;
  return Number(trimmed);
}

export function toStartRunInput(form: ModelForm): { input: ApiInput<'startRun'>; errors: FormErrors } {
  const errors: FormErrors = {};
  const number = (field: keyof ModelForm & string, options?: { exponent: boolean }): number => {
    const value = readNumber(String(form[field]), options);
    if (value === null) {
      errors[field] = 'enter a number';
      return Number.NaN;
    }
    return value;
  };
  if (!/^\d{4}-\d{2}-\d{2}$/.test(form.asOf)) errors.asOf = 'enter a date as YYYY-MM-DD';
  const features = form.features
    .filter((choice) => choice.selected)
    .map((choice) => {
      let clipLowerPercentile: number | null = null;
      let clipUpperPercentile: number | null = null;
      if (choice.clip) {
        // An empty box leaves that side unclipped; anything else must be a number.
        clipLowerPercentile = choice.clipLower.trim() === '' ? null : readNumber(choice.clipLower);
        clipUpperPercentile = choice.clipUpper.trim() === '' ? null : readNumber(choice.clipUpper);
        if ((choice.clipLower.trim() !== '' && clipLowerPercentile === null) || (choice.clipUpper.trim() !== '' && clipUpperPercentile === null)) {
          errors[`features.${choice.feature}`] = 'enter the clipping percentiles as numbers';
        }
      }
      return { feature: choice.feature, log1p: choice.log1p, cubeRoot: choice.cubeRoot, clipLowerPercentile, clipUpperPercentile, zScore: choice.zScore };
    });
  if (features.length === 0) errors.features = 'choose at least one feature';
  const freshCategories = form.freshCategories
    .split(',')
    .map((name) => name.trim())
    .filter(Boolean);
  const input: ApiInput<'startRun'> = {
    ...form.carried,
    asOf: form.asOf,
    windowMonths: number('windowMonths'),
    mode: form.mode,
    features,
    k: form.kMode === 'auto' ? 'auto' : number('k'),
    kMin: number('kMin'),
    kMax: number('kMax'),
    covariance: form.covariance,
    // The grouping itself is not sent: a run's segments are changed after the fit (regroup), and a
    // grouping of last month's components means nothing to a new fit.
    segmentCount: form.segmentMode === 'auto' ? 'auto' : number('segmentCount'),
    criterion: form.criterion,
    restarts: number('restarts'),
    seed: number('seed'),
    init: form.init,
    tol: number('tol', { exponent: true }),
    maxIterations: number('maxIterations'),
    regularization: number('regularization', { exponent: true }),
    // An empty list goes to the core as it is, which says it needs at least one department.
    freshCategories,
    borderlineConfidence: number('borderlineConfidence'),
    borderlineMargin: number('borderlineMargin'),
    atypicalPercentile: number('atypicalPercentile'),
    minPurchases: number('minPurchases'),
    minTenureMonths: number('minTenureMonths'),
    reviewMoversBelowConfidence: form.moversOn ? number('moversBelow') : null,
    reviewCapacity: number('reviewCapacity'),
    fitSample: form.fitSample.trim() === '' ? null : number('fitSample'),
  };
  return { input, errors };
}

/** Settings whose form field has another name. */
const fieldOfSetting: Partial<Record<string, keyof ModelForm>> = { reviewMoversBelowConfidence: 'moversBelow' };

/** Zod issue paths from the core ("features.1.clipPercentile") onto the form's field keys. */
export function errorsFromIssues(issues: { path: string; message: string }[] | undefined, form: ModelForm): FormErrors {
  const errors: FormErrors = {};
  for (const issue of issues ?? []) {
    const parts = issue.path.split('.');
    if (parts[0] === 'features' && parts.length > 1) {
      const selected = form.features.filter((choice) => choice.selected);
      const choice = selected[Number(parts[1])];
      errors[choice ? `features.${choice.feature}` : 'features'] = issue.message;
    } else {
      errors[fieldOfSetting[parts[0]] ?? (parts[0] || 'form')] = issue.message;
    }
  }
  return errors;
}
