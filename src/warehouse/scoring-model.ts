/**
 * What the scoring query needs from a run: its model features with their fitted transforms, the
 * mixture, how components combine into segments (a segment's posterior is the sum of its
 * components' posteriors, DESIGN.md §5) with the segment names, and the flag thresholds. Read
 * from a stored run, or built by a caller; checked here either way, with messages that say why a
 * run cannot be scored.
 */
import type { Database } from '../store/database.js';
import { InputError } from '../errors.js';
import type { FeatureTransform } from '../features/transforms.js';
import { modelFromJSON, type MixtureModel } from '../model/index.js';

/**
 * The component → segment map: `ofComponent[c]` is the segment index of mixture component c, and
 * `names[s]` the name of segment s, as the run's segment rows store them.
 */
export interface ComponentSegments {
  names: string[];
  ofComponent: number[];
}

export interface ScoringThresholds {
  /** Borderline: confidence below this, or margin below the next (DESIGN.md §5: 0.70, 0.20). */
  borderlineConfidence: number;
  borderlineMargin: number;
  /** Atypical: log density strictly below this cut (the run's percentile of its own customers); null = none. */
  atypicalLogDensityBelow: number | null;
}

export interface ScoringModel {
  /** The run it came from (for the query's header), or null. */
  runId: number | null;
  /** Model features in model order: the names of the columns the query reads, in original units. */
  features: string[];
  /** Fitted transform of each feature, in the same order. */
  transforms: FeatureTransform[];
  model: MixtureModel;
  segments: ComponentSegments;
  thresholds: ScoringThresholds;
}

/** One segment per component, named in component order (what runs store today). */
export function componentsAsSegments(names: readonly string[]): ComponentSegments {
  return { names: [...names], ofComponent: names.map((_, c) => c) };
}

function refuse(runId: number | null, reason: string): never {
  throw new InputError(`${runId === null ? 'The model' : `Run ${runId}`} cannot be scored in SQL: ${reason}`);
}

/** Checks a scoring model; returns it unchanged or throws InputError naming the first problem. */
export function checkScoringModel(scoring: ScoringModel): ScoringModel {
  const { runId, features, transforms, model, segments, thresholds } = scoring;
  const k = model.components;
  if (features.length !== model.dimensions || transforms.length !== features.length) {
    refuse(runId, `the model has ${model.dimensions} dimension(s) but ${features.length} feature name(s) and ${transforms.length} transform(s).`);
  }
  if (new Set(features).size !== features.length) refuse(runId, 'a feature name appears twice.');
  transforms.forEach((transform, j) => {
    const fitted = transform?.fitted;
    const finiteOrNull = (value: number | null) => value === null || Number.isFinite(value);
    if (
      !fitted ||
      !Number.isFinite(fitted.mean) ||
      !(fitted.standardDeviation > 0 && Number.isFinite(fitted.standardDeviation)) ||
      !finiteOrNull(fitted.clipLower) ||
      !finiteOrNull(fitted.clipUpper)
    ) {
      refuse(runId, `the transform of feature "${features[j]}" has no usable fitted parameters.`);
    }
  });
  const { names, ofComponent } = segments;
  if (ofComponent.length !== k) refuse(runId, `the component-to-segment map has ${ofComponent.length} entries for ${k} components.`);
  if (names.length === 0) refuse(runId, 'it has no segments.');
  ofComponent.forEach((segment, c) => {
    if (!Number.isInteger(segment) || segment < 0 || segment >= names.length) {
      refuse(runId, `component ${c + 1} maps to segment ${segment}, but there are ${names.length} segments.`);
    }
  });
  names.forEach((name, s) => {
    if (typeof name !== 'string' || name.trim() === '') refuse(runId, `segment ${s + 1} has no name.`);
    if (!ofComponent.includes(s)) refuse(runId, `segment "${name}" has no component.`);
  });
  if (new Set(names).size !== names.length) refuse(runId, 'two segments have the same name.');
  const probability = (value: number) => Number.isFinite(value) && value >= 0 && value <= 1;
  if (!probability(thresholds.borderlineConfidence) || !probability(thresholds.borderlineMargin)) {
    refuse(runId, 'its borderline thresholds are not probabilities.');
  }
  if (thresholds.atypicalLogDensityBelow !== null && !Number.isFinite(thresholds.atypicalLogDensityBelow)) {
    refuse(runId, 'its atypical log-density cut is not a finite number.');
  }
  return scoring;
}

interface StoredRun {
  features: string;
  transforms: string;
  model: string | null;
  settings: string;
  atypical_log_density_below: number | null;
}

function parseJson<T>(runId: number, what: string, text: string | null): T {
  if (text === null || text === '') refuse(runId, `it holds no ${what}.`);
  try {
    return JSON.parse(text) as T;
  } catch {
    return refuse(runId, `its stored ${what} is not readable.`);
  }
}

/** The scoring model of a stored run, with its segments as the run combines its components. */
export function readScoringModel(db: Database, runId: number): ScoringModel {
  const row = db
    .prepare('SELECT features, transforms, model, settings, atypical_log_density_below FROM runs WHERE run_id = ?')
    .get(runId) as StoredRun | undefined;
  if (!row) {
    const known = db.prepare('SELECT run_id FROM runs ORDER BY run_id').pluck().all() as number[];
    throw new InputError(`There is no run ${runId}; runs in this database: ${known.length ? known.join(', ') : 'none'}.`);
  }
  const modelJson = parseJson<unknown>(runId, 'mixture model (it has labels but no model to apply)', row.model);
  if (modelJson === null) refuse(runId, 'it holds no mixture model (it has labels but no model to apply).');
  let model: MixtureModel;
  try {
    model = modelFromJSON(modelJson);
  } catch (error) {
    return refuse(runId, error instanceof Error ? error.message : String(error));
  }
  const features = parseJson<string[]>(runId, 'feature list', row.features);
  const transforms = parseJson<Record<string, FeatureTransform>>(runId, 'transforms', row.transforms);
  const settings = parseJson<{ borderlineConfidence?: number; borderlineMargin?: number }>(runId, 'settings', row.settings);
  if (!Array.isArray(features) || features.some((name) => typeof name !== 'string')) refuse(runId, 'its feature list is not a list of names.');
  const stored = db.prepare('SELECT segment_index, name, components FROM run_segments WHERE run_id = ? ORDER BY segment_index').all(runId) as {
    segment_index: number;
    name: string;
    components: string;
  }[];
  // The run's segmentation: each segment row lists its components; a component no segment lists keeps −1 and is refused by the check.
  const ofComponent = new Array<number>(model.components).fill(-1);
  for (const segment of stored) {
    let components: unknown;
    try {
      components = JSON.parse(segment.components);
    } catch {
      refuse(runId, `segment ${segment.segment_index + 1} has no readable list of components.`);
    }
    if (!Array.isArray(components)) refuse(runId, `segment ${segment.segment_index + 1} has no list of components.`);
    for (const c of components as unknown[]) {
      if (!Number.isInteger(c) || (c as number) < 0 || (c as number) >= model.components) refuse(runId, `segment ${segment.segment_index + 1} names a component the model does not have.`);
      if (ofComponent[c as number] !== -1) refuse(runId, `component ${(c as number) + 1} is in two segments.`);
      ofComponent[c as number] = segment.segment_index;
    }
  }
  const names = Array.from({ length: stored.length }, (_, s) => stored.find((segment) => segment.segment_index === s)?.name ?? '');
  return checkScoringModel({
    runId,
    features,
    transforms: features.map((name) => transforms?.[name]),
    model,
    segments: { names, ofComponent },
    thresholds: {
      borderlineConfidence: settings.borderlineConfidence ?? NaN,
      borderlineMargin: settings.borderlineMargin ?? NaN,
      atypicalLogDensityBelow: row.atypical_log_density_below,
    },
  });
}
