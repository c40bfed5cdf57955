/**
 * A segmentation run end to end (DESIGN.md §4–§7): features → transforms → fit (or the parent's
 * model for a rescore) → memberships and flags → segment names (spend order, or carried from the
 * parent by matching) → profiles → movement → one transaction that stores it all. Everything is
 * computed before anything is written, so bad input or a cancel stores nothing.
 *
 * The settings arrive validated and explicit (src/api/contract/settings.ts holds their limits and
 * defaults; `explicitRunSettings` makes the data-dependent choices): nothing here defaults them.
 */
import type { Database } from 'better-sqlite3';
import type { ExplicitRunSettings, RunSummary, StoredRunSettings } from '../api/contract.js';
import { InputError, throwIfAborted } from '../errors.js';
import { checkAsOfInData, computeReceiptFeatures, loadImportedFeatures, type FeatureTable } from '../features/compute.js';
import { fitTransform, transformValue, untransformValue, type FeatureTransform } from '../features/transforms.js';
import { featureWindow } from '../features/window.js';
import { bayesianInformationCriterion, integratedCompletedLikelihood, parameterCount, matchComponents, scoreRows, type GaussianComponent, type DataMatrix, type MixtureModel } from '../model/index.js';
import { computeFlags } from './flags.js';
import { fitForRun, fittingMessage, type StoredSweepRow } from './fit.js';
import { countMovement, driftWarnings, segmentMoments, type StoredMovement } from './movement.js';
import { carryNames, keyNumber, nameFirstRun, type NamedSegment } from './naming.js';
import { latestEarlierRunId, loadParentRun, type ParentRun } from './parent.js';
import { persistRun, type CarriedDecision } from './persist.js';
import { transformSpecOf } from './read/stored-run.js';
import { segmentProfiles } from './profiles.js';
import { carriesOver, isLowConfidenceMover, reviewMask } from './review-rules.js';
import type { RunOptions, RunProgress } from './types.js';

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

  let model: MixtureModel;
  let sweep: StoredSweepRow[] = [];
  let warnings: string[] = [];
  if (settings.mode === 'rescore') {
    model = parent!.model;
  } else {
    const fitting = fittingMessage(settings.fitSample, data.rows);
    report('fit', 0, 0, fitting);
    const fitted = await fitForRun(data, settings, { signal, onProgress: (fit) => report('fit', 0, 0, fitting, { fit }) });
    model = fitted.model;
    sweep = fitted.sweep;
    warnings = fitted.warnings;
  }
  throwIfAborted(signal);

  report('score', 0, placedRows.length, 'Scoring customers');
  const memberships = scoreRows(model, data);
  const k = model.components;
  let logLikelihood = 0;
  let sumLogTop = 0;
  for (let i = 0; i < memberships.rows; i++) {
    logLikelihood += memberships.logDensity[i];
    sumLogTop += Math.log(memberships.confidence[i]);
  }
  const bic = bayesianInformationCriterion(logLikelihood, parameterCount(k, model.dimensions, model.covarianceType), memberships.rows);
  const icl = integratedCompletedLikelihood(bic, sumLogTop);
  const flags = computeFlags(memberships.confidence, memberships.margin, memberships.logDensity, settings);

  // Hard labels over every customer of the table (-1 = too new).
  const labels = new Int32Array(table.customerIds.length).fill(-1);
  placedRows.forEach((row, p) => (labels[row] = memberships.topSegment[p]));

  report('profiles', 0, k, 'Naming segments and building profiles');
  const meanSpend = meanSpendPerSegment(table, labels, k);
  const { segments, retired } = nameSegments(db, settings, parent, model, transforms, features, data, memberships.topSegment, meanSpend);
  const profiles = segmentProfiles(table.names, table.columns, table.revenueCents, labels, k);
  throwIfAborted(signal);

  const keyOfIndex = segments.map((segment) => segment.key);
  const keysInRun = new Set(keyOfIndex);
  let movement: StoredMovement | null = null;
  if (parent) {
    report('movement', 0, 1, `Comparing with run ${parent.runId}`);
    movement = movementAgainstParent(parent, table, labels, segments, profiles.map((p) => p.share), retired);
  }

  const review = new Uint8Array(placedRows.length);
  const previousKeys: (string | null)[] = new Array(table.customerIds.length).fill(null);
  if (parent) {
    table.customerIds.forEach((customerId, i) => {
      const before = parent.segmentOf.get(customerId);
      if (before !== undefined && before >= 0) previousKeys[i] = parent.segments[before]?.key ?? null;
    });
  }
  placedRows.forEach((row, p) => {
    const mover = isLowConfidenceMover(previousKeys[row], keyOfIndex[labels[row]], memberships.confidence[p], settings.reviewMoversBelowConfidence);
    review[p] = reviewMask(flags.borderline[p] === 1, flags.atypical[p] === 1, mover);
  });

  const carried: CarriedDecision[] = [];
  if (parent) {
    const placedIds = new Set(placedRows.map((row) => table.customerIds[row]));
    for (const decision of parent.decisions) {
      if (placedIds.has(decision.customerId) && carriesOver(decision, keysInRun)) carried.push(decision);
    }
  }

  throwIfAborted(signal);
  report('store', 0, table.customerIds.length, 'Storing the run');
  const stored: StoredRunSettings = {
    ...settings,
    source: table.source,
    features: features.map((feature) => transformSpecOf(feature, transforms[feature])),
  };
  const runId = persistRun(db, {
    settings: stored,
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
    memberships,
    flags,
    review,
    previousKeys,
    segments,
    profiles,
    retired,
    movement,
    warnings,
    carried,
    onProgress: (done) => report('store', done, table.customerIds.length, 'Storing the run'),
  });

  const bySpend = [...segments].sort((a, b) => a.spendRank - b.spendRank);
  return {
    runId,
    parentRunId,
    k,
    covariance: model.covarianceType,
    bic,
    customers: placedRows.length,
    tooNew,
    borderline: flags.borderline.reduce((a, b) => a + b, 0),
    atypical: flags.atypical.reduce((a, b) => a + b, 0),
    segments: bySpend.map((segment) => ({
      name: segment.name,
      customers: profiles[segment.index].customers,
      share: profiles[segment.index].share,
      revenueShare: profiles[segment.index].revenueShare,
    })),
    stability: movement ? movement.adjustedRandIndex : null,
  };
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

/** Mean spend per month of each segment's members (net window spend when spend is not a feature). */
function meanSpendPerSegment(table: FeatureTable, labels: Int32Array, k: number): number[] {
  const spendColumn = table.names.indexOf('spend_per_month');
  const spend = spendColumn >= 0 ? table.columns[spendColumn] : table.revenueCents;
  const sums = new Array<number>(k).fill(0);
  const counts = new Array<number>(k).fill(0);
  for (let i = 0; i < labels.length; i++) {
    if (labels[i] < 0 || Number.isNaN(spend[i])) continue;
    sums[labels[i]] += spend[i];
    counts[labels[i]]++;
  }
  return sums.map((sum, s) => (counts[s] > 0 ? sum / counts[s] : NaN));
}

/** Keys and names: the parent's for a rescore, carried by matching in a refit, spend order otherwise. */
function nameSegments(
  db: Database,
  settings: RunningSettings,
  parent: ParentRun | null,
  model: MixtureModel,
  transforms: Record<string, FeatureTransform>,
  features: readonly string[],
  data: DataMatrix,
  topSegment: Int32Array,
  meanSpend: number[],
): { segments: NamedSegment[]; retired: { key: string; name: string }[] } {
  if (!parent) return { segments: nameFirstRun(meanSpend), retired: [] };
  if (settings.mode === 'rescore') {
    const fresh = nameFirstRun(meanSpend);
    return {
      segments: parent.segments.map((segment) => ({ ...segment, spendRank: fresh[segment.index].spendRank, origin: 'matched' as const })),
      retired: [],
    };
  }
  const parentComponents = componentsOf(parent.model);
  const childComponents = childInParentSpace(model, transforms, features, data, topSegment, parent);
  const matching = matchComponents(parentComponents, childComponents);
  const usedKeys = db.prepare('SELECT segment_key FROM run_segments').pluck().all() as string[];
  const nextKey = 1 + Math.max(0, ...usedKeys.map(keyNumber));
  return carryNames(parent.segments, matching.pairs, meanSpend, nextKey);
}

function componentsOf(model: MixtureModel): GaussianComponent[] {
  const { components: k, dimensions: d } = model;
  return Array.from({ length: k }, (_, c) => ({
    mean: model.means.slice(c * d, (c + 1) * d),
    covariance: model.covariances.slice(c * d * d, (c + 1) * d * d),
  }));
}

/**
 * The new model's components expressed in the parent's transformed space. With the same features
 * and log choices the map between the two z-scored spaces is affine per feature
 * (x_parent = a x_child + b), so means and covariances map exactly (clipping only bounds the
 * tails). Otherwise the components are the new segments' members' means and variances computed
 * after the parent's transforms.
 */
function childInParentSpace(
  model: MixtureModel,
  transforms: Record<string, FeatureTransform>,
  features: readonly string[],
  data: DataMatrix,
  topSegment: Int32Array,
  parent: ParentRun,
): GaussianComponent[] {
  const sameSpace =
    features.length === parent.features.length &&
    features.every((name, j) => name === parent.features[j] && transforms[name].log1p === parent.transforms[name].log1p);
  const d = parent.features.length;
  if (sameSpace) {
    const scale = features.map((name) => transforms[name].fitted!.standardDeviation / parent.transforms[name].fitted!.standardDeviation);
    const shift = features.map(
      (name) => (transforms[name].fitted!.mean - parent.transforms[name].fitted!.mean) / parent.transforms[name].fitted!.standardDeviation,
    );
    return componentsOf(model).map(({ mean, covariance }) => ({
      mean: Float64Array.from(mean, (value, j) => scale[j] * value + shift[j]),
      covariance: Float64Array.from(covariance, (value, index) => scale[Math.floor(index / d)] * scale[index % d] * value),
    }));
  }
  // Back to original units per feature, then into the parent's space.
  const columns = parent.features.map((name) => {
    const j = features.indexOf(name);
    return Float64Array.from({ length: data.rows }, (_, i) => {
      const original = j >= 0 ? untransformValue(transforms[name], data.values[i * data.cols + j]) : NaN;
      return transformValue(name, parent.transforms[name], original);
    });
  });
  const moments = segmentMoments(columns, topSegment, model.components);
  return moments.means.map((mean, c) => {
    const covariance = new Float64Array(d * d);
    for (let j = 0; j < d; j++) covariance[j * d + j] = Math.max(moments.standardDeviations[c][j] ** 2, 1e-6) || 1;
    return { mean: Float64Array.from(mean, (value) => (Number.isFinite(value) ? value : 0)), covariance };
  });
}

function movementAgainstParent(
  parent: ParentRun,
  table: FeatureTable,
  labels: Int32Array,
  segments: readonly NamedSegment[],
  shares: readonly number[],
  retired: { key: string; name: string }[],
): StoredMovement {
  const current = new Map<string, number>();
  table.customerIds.forEach((customerId, i) => current.set(customerId, labels[i]));
  const counted = countMovement(parent.segmentOf, current, parent.model.components, segments.length);
  // Current members' means in the parent's transformed space, against the parent members' spread.
  const columns = parent.features.map((name) => {
    const values = table.columns[table.names.indexOf(name)];
    return Float64Array.from(values, (value, i) => (labels[i] >= 0 ? transformValue(name, parent.transforms[name], value) : NaN));
  });
  const now = segmentMoments(columns, labels, segments.length);
  const warnings = driftWarnings(
    parent.features,
    parent.segments.map((segment) => ({
      ...segment,
      means: parent.moments.means[segment.index],
      standardDeviations: parent.moments.standardDeviations[segment.index],
    })),
    segments.map((segment) => ({ key: segment.key, name: segment.name, share: shares[segment.index], means: now.means[segment.index] })),
  );
  return {
    parentRunId: parent.runId,
    parentSegments: parent.segments.map(({ index, key, name }) => ({ index, key, name })),
    currentSegments: segments.map(({ index, key, name }) => ({ index, key, name })),
    counts: counted.counts,
    common: counted.common,
    entered: counted.entered,
    left: counted.left,
    adjustedRandIndex: counted.adjustedRandIndex,
    warnings,
    retired,
    added: segments.filter((segment) => segment.origin === 'new').map(({ key, name }) => ({ key, name })),
  };
}
