/**
 * A segmentation run end to end (DESIGN.md §4–§7): features → transforms → a check of the feature
 * set (constant or collinear features) → fit (or the parent's model for a rescore) → component
 * posteriors → components combined into segments (the entropy criterion; ./combine.ts) → segment
 * memberships, flags, names, profiles, movement and the review queue (./segmenting.ts) → one
 * transaction that stores it all. Everything is computed before anything is written, so bad input
 * or a cancel stores nothing.
 *
 * The settings arrive validated and explicit (src/api/contract/settings.ts holds their limits and
 * defaults; `explicitRunSettings` makes the data-dependent choices): nothing here defaults them.
 */
import type { Database } from 'better-sqlite3';
import type { ExplicitRunSettings, RunSummary, StoredRunSettings } from '../api/contract.js';
import { InputError, throwIfAborted } from '../errors.js';
import { checkAsOfInData, computeReceiptFeatures, loadImportedFeatures, type FeatureTable } from '../features/compute.js';
import { fitTransform, transformValue, type FeatureTransform } from '../features/transforms.js';
import { featureWindow } from '../features/window.js';
import {
  bayesianInformationCriterion,
  combineComponents,
  integratedCompletedLikelihood,
  parameterCount,
  scoreRows,
  type DataMatrix,
  type MixtureModel,
  type Segmentation,
} from '../model/index.js';
import { atypicalTerms, type StoredAtypicalTerm } from './atypical.js';
import { chosenSegmentation, storedSegmentation } from './combine.js';
import { checkFeatureSet } from './feature-check.js';
import { fitForRun, fittingMessage, type StoredSweepRow } from './fit.js';
import { keyNumber } from './naming.js';
import { latestEarlierRunId, loadParentRun, previousKeyOf, type ParentRun } from './parent.js';
import { persistRun, type CarriedDecision } from './persist.js';
import { getRunSummary } from './read/run-detail.js';
import { transformSpecOf } from './read/stored-run.js';
import { carriesOver } from './review-rules.js';
import { segmentPlaced, type EarlierSegments, type PlacedCustomers } from './segmenting.js';
import type { RunOptions, RunProgress, StoredSegmentation } from './types.js';

/** Runs a segmentation and stores it; resolves to the `refresh --json` summary. */
export async function runSegmentation(db: Database, input: ExplicitRunSettings, options: RunOptions = {}): Promise<RunSummary> {
  const { signal } = options;
  const report = (phase: RunProgress['phase'], done: number, total: number, message: string, extra: Partial<RunProgress> = {}) =>
    options.onProgress?.({ phase, done, total, message, ...extra });

  const parentRunId = input.parentRunId === undefined ? latestEarlierRunId(db, input.asOf) : input.parentRunId;
  if (input.mode === 'rescore' && parentRunId === null) {
    throw new InputError('A rescore applies an earlier run\'s model, but there is no earlier run; run a refit first or name the parent run.');
  }
  const parent = parentRunId === null ? null : loadParentRun(db, parentRunId);
  const settings = { ...input, parentRunId };

  report('features', 0, 1, `Computing features for the ${settings.windowMonths} months to ${settings.asOf}`);
  const table = buildFeatureTable(db, settings, signal);
  report('features', 1, 1, `Features for ${table.customerIds.length} customers`);
  throwIfAborted(signal);

  const features = modelFeatures(settings, table, parent);
  const featureColumns = features.map((name) => table.columns[table.names.indexOf(name)]);
  const placedRows: number[] = [];
  for (let i = 0; i < table.customerIds.length; i++) if (!table.tooNew[i]) placedRows.push(i);
  const tooNew = table.customerIds.length - placedRows.length;
  if (placedRows.length === 0) {
    throw new InputError(
      `No customer has enough history to place: all ${tooNew} customers in the window are too new ` +
        `(fewer than ${settings.minPurchases} purchases or under ${settings.minTenureMonths} months of tenure). ` +
        'Choose a later as-of date, a longer window, or lower the too-new thresholds.',
    );
  }

  report('transform', 0, features.length, 'Transforming features');
  const transforms = fittedTransforms(settings, features, featureColumns, placedRows, parent);
  const data = transformedMatrix(features, transforms, featureColumns, placedRows);
  // A rescore applies the parent's model as it is; a refit checks the feature set first.
  const featureWarnings = settings.mode === 'rescore' ? [] : checkFeatureSet(data, features);

  let model: MixtureModel;
  let sweep: StoredSweepRow[] = [];
  let warnings: string[] = [...featureWarnings];
  if (settings.mode === 'rescore') {
    model = parent!.model;
  } else {
    const fitting = fittingMessage(settings.fitSample, data.rows);
    report('fit', 0, 0, fitting);
    const fitted = await fitForRun(data, settings, { signal, onProgress: (fit) => report('fit', 0, 0, fitting, { fit }) });
    model = fitted.model;
    sweep = fitted.sweep;
    warnings = [...featureWarnings, ...fitted.warnings];
  }
  throwIfAborted(signal);

  report('score', 0, placedRows.length, 'Scoring customers');
  const scores = scoreRows(model, data);
  const k = model.components;
  let logLikelihood = 0;
  let sumLogTop = 0;
  for (let i = 0; i < scores.rows; i++) {
    logLikelihood += scores.logDensity[i];
    sumLogTop += Math.log(scores.confidence[i]);
  }
  const bic = bayesianInformationCriterion(logLikelihood, parameterCount(k, model.dimensions, model.covarianceType), scores.rows);
  const icl = integratedCompletedLikelihood(bic, sumLogTop);

  report('combine', 0, 1, `Combining ${k} components into segments`);
  const hierarchy = combineComponents(scores.posteriors, scores.rows, k);
  const { segmentation, method } =
    settings.mode === 'rescore' ? parentSegmentation(parent!, k) : chosenSegmentation(hierarchy, settings);
  const stored: StoredSegmentation = storedSegmentation(hierarchy, segmentation, method);
  throwIfAborted(signal);

  report('profiles', 0, segmentation.segments.length, 'Naming segments and building profiles');
  const storedFeatures = [...features, ...table.names.filter((name) => !features.includes(name))];
  const placed: PlacedCustomers = {
    customerIds: placedRows.map((row) => table.customerIds[row]),
    revenueCents: Float64Array.from(placedRows, (row) => table.revenueCents[row]),
    features: storedFeatures,
    columns: storedFeatures.map((name) => {
      const column = table.columns[table.names.indexOf(name)];
      return Float64Array.from(placedRows, (row) => column[row]);
    }),
    posteriors: scores.posteriors,
    components: k,
    logDensity: scores.logDensity,
  };
  const outcome = segmentPlaced({
    placed,
    notPlaced: table.customerIds.filter((_, i) => table.tooNew[i]),
    segmentation,
    requireMembers: settings.mode !== 'rescore' && method !== 'auto',
    modelFeatures: features,
    thresholds: settings,
    reviewMoversBelowConfidence: settings.reviewMoversBelowConfidence,
    reviewCapacity: settings.reviewCapacity,
    earlier: earlierSegments(settings, parent),
    parent,
    nextKeyNumber: nextKeyNumber(db),
  });
  if (parent) report('movement', 1, 1, `Compared with run ${parent.runId}`);
  const atypicalReasons = atypicalReasonsOf(placed, features, outcome.flags.atypical, outcome.sortedByFeature);
  throwIfAborted(signal);

  const keysInRun = new Set(outcome.segments.map((segment) => segment.key));
  const carried: CarriedDecision[] = [];
  if (parent) {
    const placedIds = new Set(placed.customerIds);
    for (const decision of parent.decisions) {
      if (placedIds.has(decision.customerId) && carriesOver(decision, keysInRun)) carried.push(decision);
    }
  }

  throwIfAborted(signal);
  report('store', 0, table.customerIds.length, 'Storing the run');
  const storedSettings: StoredRunSettings = {
    ...settings,
    source: table.source,
    features: features.map((feature) => transformSpecOf(feature, transforms[feature])),
    // What repeats the month exactly: the grouping itself after hand edits, the count otherwise.
    segmentCount: method === 'auto' ? 'auto' : segmentation.segments.length,
    segmentation: method === 'hand' ? segmentation.segments.map((group) => [...group]) : null,
  };
  const runId = persistRun(db, {
    settings: storedSettings,
    features,
    transforms,
    table,
    model,
    sweep,
    criterion: settings.criterion,
    logLikelihood,
    bic,
    icl,
    placedRows,
    scores,
    outcome,
    segmentation: stored,
    previousKeys: table.customerIds.map((customerId) => previousKeyOf(parent, customerId)),
    atypicalReasons,
    warnings,
    carried,
    onProgress: (done) => report('store', done, table.customerIds.length, 'Storing the run'),
  });
  return getRunSummary(db, runId);
}

/** A rescore keeps the parent's grouping of its components (the same model) and how it was chosen. */
function parentSegmentation(parent: ParentRun, components: number): { segmentation: Segmentation; method: StoredSegmentation['method'] } {
  return { segmentation: { components, segments: parent.segments.map((segment) => [...segment.components]) }, method: parent.segmentation.method };
}

/** Which earlier segments the new ones may continue: the parent's own (rescore), by shared customers (refit), none (first run). */
function earlierSegments(settings: RunningSettings, parent: ParentRun | null): EarlierSegments {
  if (!parent) return null;
  const segments = parent.segments.map(({ index, key, name, renamed, traits }) => ({ index, key, name, renamed, traits, origin: 'matched' as const }));
  return settings.mode === 'rescore' ? { kind: 'same', segments } : { kind: 'members', segments, segmentOf: parent.segmentOf };
}

/** The number after every segment key used so far in the database, so a new segment's key is never one used before. */
export function nextKeyNumber(db: Database): number {
  const usedKeys = db.prepare('SELECT segment_key FROM run_segments').pluck().all() as string[];
  return 1 + Math.max(0, ...usedKeys.map(keyNumber));
}

/** The features an atypical customer's reason may name: the model's, and spend per month for the money it means. */
function atypicalReasonsOf(
  placed: PlacedCustomers,
  modelFeatures: readonly string[],
  atypical: Uint8Array,
  sortedByFeature: ReadonlyMap<string, Float64Array>,
): (StoredAtypicalTerm[] | null)[] {
  const candidates = [...new Set([...modelFeatures, 'spend_per_month'])].filter((feature) => placed.features.includes(feature));
  const sorted = candidates.map((feature) => ({ feature, sorted: sortedByFeature.get(feature)! }));
  const columns = candidates.map((feature) => placed.columns[placed.features.indexOf(feature)]);
  return Array.from(atypical, (flag, p) => (flag ? atypicalTerms(columns.map((column) => column[p]), sorted) : null));
}

type RunningSettings = ExplicitRunSettings & { parentRunId: number | null };

function buildFeatureTable(db: Database, settings: RunningSettings, signal: AbortSignal | undefined): FeatureTable {
  if (settings.source === 'imported') return loadImportedFeatures(db, settings);
  checkAsOfInData(db, featureWindow(settings.asOf, settings.windowMonths));
  return computeReceiptFeatures(db, { ...settings, signal });
}

/** The model's features: the parent's for a rescore, else the chosen ones. */
function modelFeatures(settings: RunningSettings, table: FeatureTable, parent: ParentRun | null): string[] {
  if (parent) {
    const missing = parent.features.filter((name) => !table.names.includes(name));
    if (missing.length > 0) {
      throw new InputError(
        `The parent run ${parent.runId} uses the feature${missing.length > 1 ? 's' : ''} ${missing.join(', ')}, ` +
          `which the new data does not have (available: ${table.names.join(', ')}). Refit without a parent or import data with ${missing.length > 1 ? 'them' : 'it'}.`,
      );
    }
  }
  const chosen = settings.mode === 'rescore' ? parent!.features : settings.features.map((spec) => spec.feature);
  const unknown = chosen.filter((name) => !table.names.includes(name));
  if (unknown.length > 0) {
    throw new InputError(`Unknown feature${unknown.length > 1 ? 's' : ''} ${unknown.join(', ')}; available: ${table.names.join(', ')}.`);
  }
  return [...chosen];
}

function fittedTransforms(
  settings: RunningSettings,
  features: readonly string[],
  columns: readonly Float64Array[],
  placedRows: readonly number[],
  parent: ParentRun | null,
): Record<string, FeatureTransform> {
  if (settings.mode === 'rescore') return Object.fromEntries(features.map((name) => [name, parent!.transforms[name]]));
  const transforms: Record<string, FeatureTransform> = {};
  features.forEach((name, j) => {
    const { feature: _, ...spec } = settings.features.find((chosen) => chosen.feature === name)!;
    transforms[name] = fitTransform(name, spec, Float64Array.from(placedRows, (row) => columns[j][row]));
  });
  return transforms;
}

function transformedMatrix(
  features: readonly string[],
  transforms: Record<string, FeatureTransform>,
  columns: readonly Float64Array[],
  rows: readonly number[],
): DataMatrix {
  const d = features.length;
  const values = new Float64Array(rows.length * d);
  rows.forEach((row, p) => {
    for (let j = 0; j < d; j++) values[p * d + j] = transformValue(features[j], transforms[features[j]], columns[j][row]);
  });
  return { values, rows: rows.length, cols: d, columnNames: features };
}

