/**
 * A stored run as the reads need it, kept per database connection: the runs row (settings,
 * features, fitted transforms, numbers) parsed once, the model parsed once when a screen first
 * needs it, and room for what a screen derives from the whole run (the Certainty summary). A
 * stored run changes only by a regroup of its segments (names and decisions live in other
 * tables), which bumps the row's revision; a cheap fingerprint of the row (revision included),
 * checked on every use, catches a regrouped run, and a run that was deleted or whose id was freed
 * and taken by a new run.
 */
import type { Database } from 'better-sqlite3';
import type { CovarianceType, FeatureSource, FeatureTransformSpec, InitMethod, RefreshMode, SelectionCriterion, StoredRunSettings } from '../../api/contract.js';
import { InputError } from '../../errors.js';
import type { FeatureTransform } from '../../features/transforms.js';
import { modelFromJSON, type MixtureModel } from '../../model/index.js';
import type { StoredSegmentation } from '../types.js';

export interface StoredRun {
  runId: number;
  parentRunId: number | null;
  createdAt: string;
  asOf: string;
  windowMonths: number;
  mode: RefreshMode;
  source: FeatureSource;
  settings: StoredRunSettings;
  /** Model features in order, with their fitted transforms. */
  features: string[];
  transforms: Record<string, FeatureTransform>;
  /** Every feature stored per customer (model features first). */
  storedFeatures: string[];
  criterion: SelectionCriterion;
  k: number;
  covariance: CovarianceType;
  logLikelihood: number;
  bic: number;
  icl: number;
  customers: number;
  tooNew: number;
  borderline: number;
  atypical: number;
  /** The log-density cut below which customers are atypical (null when the percentile is 0). */
  atypicalCut: number | null;
  stability: number | null;
  warnings: string[];
  /** Parent segments without a match in a refit. */
  retired: { key: string; name: string }[];
  /** How the components are combined into segments. */
  segmentation: StoredSegmentation;
}

/** The runs row without its large columns (model, sweep, movement: read where needed). */
interface RunRow {
  run_id: number;
  parent_run_id: number | null;
  created_at: string;
  as_of: string;
  window_months: number;
  mode: RefreshMode;
  source: FeatureSource;
  settings: string;
  features: string;
  stored_features: string;
  transforms: string;
  criterion: SelectionCriterion;
  k: number;
  covariance: CovarianceType;
  log_likelihood: number;
  bic: number;
  icl: number;
  customers: number;
  too_new: number;
  borderline: number;
  atypical: number;
  atypical_log_density_below: number | null;
  stability: number | null;
  warnings: string;
  retired: string;
  segmentation: string | null;
}

const runColumns = `run_id, parent_run_id, created_at, as_of, window_months, mode, source, settings, features, stored_features,
  transforms, criterion, k, covariance, log_likelihood, bic, icl, customers, too_new, borderline, atypical, atypical_log_density_below,
  stability, warnings, retired, segmentation`;

/** The specification part of a fitted transform, as the contract names it. */
export function transformSpecOf(feature: string, transform: FeatureTransform): FeatureTransformSpec {
  const { log1p, clipLowerPercentile, clipUpperPercentile, zScore } = transform;
  return { feature, log1p, cubeRoot: Boolean(transform.cubeRoot), clipLowerPercentile, clipUpperPercentile, zScore };
}

/**
 * The settings column in the contract's form. The features are always those the model used (the
 * features and transforms columns). Runs stored before the settings carried the initialisation
 * were started by k-means, the engine's one start then, and runs stored before the fit sample were
 * fitted on all placed customers; their settings also held the features as names with a separate
 * transforms object, which the columns replace.
 */
function settingsOf(row: RunRow, features: string[], transforms: Record<string, FeatureTransform>): StoredRunSettings {
  const { transforms: _oldTransforms, features: _features, ...stored } = JSON.parse(row.settings) as Omit<StoredRunSettings, 'init' | 'segmentCount' | 'reviewCapacity' | 'fitSample'> & {
    init?: InitMethod;
    segmentCount?: StoredRunSettings['segmentCount'];
    reviewCapacity?: number;
    fitSample?: number | null;
    transforms?: unknown;
  };
  return {
    ...stored,
    init: stored.init ?? 'kmeans',
    segmentCount: stored.segmentCount ?? row.k,
    reviewCapacity: stored.reviewCapacity ?? row.borderline + row.atypical,
    fitSample: stored.fitSample ?? null,
    source: row.source,
    parentRunId: row.parent_run_id,
    features: features.map((feature) => transformSpecOf(feature, transforms[feature])),
  };
}

function toStoredRun(row: RunRow): StoredRun {
  const features = JSON.parse(row.features) as string[];
  const transforms = JSON.parse(row.transforms) as Record<string, FeatureTransform>;
  return {
    runId: row.run_id,
    parentRunId: row.parent_run_id,
    createdAt: row.created_at,
    asOf: row.as_of,
    windowMonths: row.window_months,
    mode: row.mode,
    source: row.source,
    settings: settingsOf(row, features, transforms),
    features,
    transforms,
    storedFeatures: JSON.parse(row.stored_features) as string[],
    criterion: row.criterion,
    k: row.k,
    covariance: row.covariance,
    logLikelihood: row.log_likelihood,
    bic: row.bic,
    icl: row.icl,
    customers: row.customers,
    tooNew: row.too_new,
    borderline: row.borderline,
    atypical: row.atypical,
    atypicalCut: row.atypical_log_density_below,
    stability: row.stability,
    warnings: JSON.parse(row.warnings) as string[],
    retired: JSON.parse(row.retired) as { key: string; name: string }[],
    segmentation: segmentationOfRow(row),
  };
}

/** The stored segmentation; runs stored before segments were made of components have one segment per component. */
function segmentationOfRow(row: RunRow): StoredSegmentation {
  if (row.segmentation !== null) return JSON.parse(row.segmentation) as StoredSegmentation;
  return {
    method: 'level',
    segments: Array.from({ length: row.k }, (_, c) => [c]),
    autoSegmentCount: null,
    autoSegmentCountByMergedRows: null,
    levels: null,
  };
}

/** The InputError for a run id that is not in the database, naming the ones that are. */
function noSuchRun(db: Database, runId: number): InputError {
  const known = db.prepare('SELECT run_id FROM runs ORDER BY run_id').pluck().all() as number[];
  return new InputError(`There is no run ${runId}; runs in this database: ${known.length ? known.join(', ') : 'none yet (run refresh first)'}.`);
}

// ---------------------------------------------------------------------------------------------
// The cache: per connection, per run id, most recently used last

interface Entry {
  fingerprint: string;
  run: StoredRun;
  model?: MixtureModel;
  /** Whole-run summaries built by a screen's read (see `derivedFromRun`). */
  derived: Map<string, unknown>;
}

/** Runs kept per connection (a Certainty summary holds three float columns of a run: 24 MB at 1 M). */
const MAX_CACHED_RUNS = 3;

const entriesByConnection = new WeakMap<Database, Map<number, Entry>>();

/** What identifies one stored run beyond its id (an id freed by a deleted run can be reused). */
function fingerprintOf(db: Database, runId: number): string | null {
  const row = db.prepare('SELECT created_at, customers, k, log_likelihood, revision FROM runs WHERE run_id = ?').raw().get(runId) as unknown[] | undefined;
  return row ? JSON.stringify(row) : null;
}

function entryFor(db: Database, runId: number): Entry {
  if (!Number.isSafeInteger(runId) || runId < 1) throw new InputError(`A run id is a whole number from 1; got ${String(runId)}.`);
  let entries = entriesByConnection.get(db);
  if (!entries) {
    entries = new Map();
    entriesByConnection.set(db, entries);
  }
  const fingerprint = fingerprintOf(db, runId);
  const cached = entries.get(runId);
  entries.delete(runId);
  if (fingerprint === null) throw noSuchRun(db, runId);
  if (cached && cached.fingerprint === fingerprint) {
    entries.set(runId, cached); // re-inserted: most recently used
    return cached;
  }
  const row = db.prepare(`SELECT ${runColumns} FROM runs WHERE run_id = ?`).get(runId) as RunRow;
  const entry: Entry = { fingerprint, run: toStoredRun(row), derived: new Map() };
  entries.set(runId, entry);
  while (entries.size > MAX_CACHED_RUNS) entries.delete(entries.keys().next().value!);
  return entry;
}

/** The stored run; InputError naming the known runs when there is no such run. */
export function storedRun(db: Database, runId: number): StoredRun {
  return entryFor(db, runId).run;
}

/** The run's fitted mixture, parsed from its stored JSON once per connection. */
export function runModel(db: Database, runId: number): MixtureModel {
  const entry = entryFor(db, runId);
  entry.model ??= modelFromJSON(JSON.parse(db.prepare('SELECT model FROM runs WHERE run_id = ?').pluck().get(runId) as string));
  return entry.model;
}

/** A summary of the whole run built once by `build` and kept with the run's entry under `name`. */
export function derivedFromRun<T>(db: Database, runId: number, name: string, build: () => T): T {
  const entry = entryFor(db, runId);
  if (!entry.derived.has(name)) entry.derived.set(name, build());
  return entry.derived.get(name) as T;
}

/** Whether this connection holds the run's entry with `name` built (for tests of the cache). */
export function holdsDerived(db: Database, runId: number, name: string): boolean {
  return entriesByConnection.get(db)?.get(runId)?.derived.has(name) ?? false;
}

/** `'latest'` or an id → an existing run id; InputError naming the known ids otherwise. */
export function resolveRunId(db: Database, run: number | 'latest'): number {
  if (run === 'latest') {
    const latest = db.prepare('SELECT max(run_id) FROM runs').pluck().get() as number | null;
    if (latest === null) throw new InputError('The database has no runs yet; run refresh first.');
    return latest;
  }
  return storedRun(db, run).runId;
}
