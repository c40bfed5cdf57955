/**
 * Writes a computed run in one transaction: the run row (with its segmentation), its segments with
 * profiles, a membership row for every customer of the feature table (placed or too new) and the
 * review decisions carried over from the parent. Either all of it is stored or none. The segment
 * rows and the run row's segment columns are written by the same functions when a stored run is
 * regrouped (./regroup.ts).
 */
import type { Database } from 'better-sqlite3';
import type { FeatureTable } from '../features/compute.js';
import type { FeatureTransform } from '../features/transforms.js';
import { modelToJSON, type Memberships, type MixtureModel } from '../model/index.js';
import type { SelectionCriterion, StoredRunSettings } from '../api/contract.js';
import type { StoredAtypicalTerm } from './atypical.js';
import { encodeFloat64 } from './blobs.js';
import { displaySamplePositions } from './display-sample.js';
import type { StoredSweepRow } from './fit.js';
import type { ParentDecision } from './parent.js';
import type { SegmentOutcome } from './segmenting.js';
import type { StoredSegmentation } from './types.js';

export type CarriedDecision = ParentDecision;

export interface RunRecord {
  settings: StoredRunSettings;
  features: string[];
  transforms: Record<string, FeatureTransform>;
  table: FeatureTable;
  model: MixtureModel;
  sweep: StoredSweepRow[];
  criterion: SelectionCriterion;
  logLikelihood: number;
  bic: number;
  icl: number;
  /** Table rows of the placed customers, in the order of `scores` and `outcome`. */
  placedRows: number[];
  /** Component-level scores: posteriors (n × K), log density, partial rows. */
  scores: Memberships;
  outcome: SegmentOutcome;
  segmentation: StoredSegmentation;
  /** Parent segment key per table row (null when not placed in the parent). */
  previousKeys: (string | null)[];
  /** Why each atypical placed customer fits no segment (null for the others). */
  atypicalReasons: (StoredAtypicalTerm[] | null)[];
  warnings: string[];
  carried: CarriedDecision[];
  onProgress?: (done: number) => void;
}

/** The run row's columns that depend on the segmentation (written again by a regroup). */
export function segmentColumns(outcome: SegmentOutcome, segmentation: StoredSegmentation) {
  const { flags, movement } = outcome;
  return {
    borderline: flags.borderline.reduce((a, b) => a + b, 0),
    atypical: flags.atypical.reduce((a, b) => a + b, 0),
    atypicalCut: Number.isFinite(flags.atypicalLogDensityBelow) ? flags.atypicalLogDensityBelow : null,
    stability: movement?.adjustedRandIndex ?? null,
    retired: JSON.stringify(movement?.retired ?? []),
    movement: movement ? JSON.stringify(movement) : null,
    segmentation: JSON.stringify(segmentation),
  };
}

/** Inserts the run's segment rows (index = segment index) with their profiles, components, traits and names. */
export function insertSegmentRows(db: Database, runId: number, outcome: SegmentOutcome): void {
  const insert = db.prepare(`
    INSERT INTO run_segments (run_id, segment_index, segment_key, name, spend_rank, origin, customers, share, revenue_cents, revenue_share, profile,
                              components, default_name, renamed, traits)
    VALUES (?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?)`);
  for (const segment of outcome.segments) {
    const profile = outcome.profiles[segment.index];
    insert.run(
      runId,
      segment.index,
      segment.key,
      segment.name,
      segment.spendRank,
      segment.origin,
      profile.customers,
      profile.share,
      Math.round(profile.revenueCents),
      profile.revenueShare,
      JSON.stringify({ features: profile.features }),
      JSON.stringify(segment.components),
      segment.defaultName,
      segment.renamed ? 1 : 0,
      JSON.stringify(segment.traits),
    );
  }
}

/** Stores the run and returns its id. */
export function persistRun(db: Database, record: RunRecord): number {
  const { table, model, scores, outcome } = record;
  const k = model.components;
  const { memberships } = outcome;
  // Stored features: model features first, then the rest of the table, all in original units.
  const storedFeatures = [...record.features, ...table.names.filter((name) => !record.features.includes(name))];
  const storedColumns = storedFeatures.map((name) => table.columns[table.names.indexOf(name)]);
  const spendColumn = table.names.indexOf('spend_per_month');
  const placedAt = new Int32Array(table.customerIds.length).fill(-1);
  record.placedRows.forEach((row, p) => (placedAt[row] = p));

  const insertRun = db.prepare(`
    INSERT INTO runs (parent_run_id, created_at, as_of, window_months, mode, source, settings, features, stored_features,
                      transforms, model, sweep, criterion, k, covariance, log_likelihood, bic, icl, customers, too_new,
                      borderline, atypical, atypical_log_density_below, stability, warnings, retired, movement, segmentation)
    VALUES (@parent, @createdAt, @asOf, @windowMonths, @mode, @source, @settings, @features, @storedFeatures,
            @transforms, @model, @sweep, @criterion, @k, @covariance, @logLikelihood, @bic, @icl, @customers, @tooNew,
            @borderline, @atypical, @atypicalCut, @stability, @warnings, @retired, @movement, @segmentation)`);
  const insertMembership = db.prepare(`
    INSERT INTO run_memberships (run_id, customer_id, segment_index, confidence, margin, second_index, second_probability, log_density,
                                 borderline, atypical, partial, too_new, review, previous_key, revenue_cents, spend_per_month, features, posteriors,
                                 review_value, queued, atypical_reason)
    VALUES (?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?)`);
  const insertSample = db.prepare('INSERT INTO run_samples (run_id, position, customer_id, segment_index, features) VALUES (?, ?, ?, ?, ?)');
  const insertDecision = db.prepare(`
    INSERT INTO review_decisions (run_id, customer_id, action, segment_key, note, reviewer, decided_at, carried_from_run_id)
    VALUES (?, ?, ?, ?, ?, ?, ?, ?)`);

  const store = db.transaction(() => {
    const placed = record.placedRows.length;
    const runId = Number(
      insertRun.run({
        parent: record.settings.parentRunId,
        createdAt: new Date().toISOString(),
        asOf: record.settings.asOf,
        windowMonths: record.settings.windowMonths,
        mode: record.settings.mode,
        source: table.source,
        settings: JSON.stringify(record.settings),
        features: JSON.stringify(record.features),
        storedFeatures: JSON.stringify(storedFeatures),
        transforms: JSON.stringify(record.transforms),
        model: JSON.stringify(modelToJSON(model)),
        sweep: JSON.stringify(record.sweep),
        criterion: record.criterion,
        k,
        covariance: model.covarianceType,
        logLikelihood: record.logLikelihood,
        bic: record.bic,
        icl: record.icl,
        customers: placed,
        tooNew: table.customerIds.length - placed,
        warnings: JSON.stringify(record.warnings),
        ...segmentColumns(outcome, record.segmentation),
      }).lastInsertRowid,
    );
    insertSegmentRows(db, runId, outcome);
    const featureVector = new Float64Array(storedFeatures.length);
    const sampleAt = displaySamplePositions(placed, record.settings.seed);
    for (let i = 0; i < table.customerIds.length; i++) {
      for (let j = 0; j < storedColumns.length; j++) featureVector[j] = storedColumns[j][i];
      const spend = spendColumn >= 0 && !Number.isNaN(table.columns[spendColumn][i]) ? table.columns[spendColumn][i] : null;
      const p = placedAt[i];
      const revenue = Math.round(table.revenueCents[i]);
      if (p < 0) {
        insertMembership.run(runId, table.customerIds[i], null, null, null, null, null, null, 0, 0, 0, 1, 0, record.previousKeys[i], revenue, spend, encodeFloat64(featureVector), null, null, 0, null);
      } else {
        const second = memberships.second[p];
        const reasons = record.atypicalReasons[p];
        insertMembership.run(
          runId,
          table.customerIds[i],
          memberships.top[p],
          memberships.confidence[p],
          memberships.margin[p],
          second >= 0 ? second : null,
          second >= 0 ? memberships.secondProbability[p] : null,
          scores.logDensity[p],
          outcome.flags.borderline[p],
          outcome.flags.atypical[p],
          scores.partial[p],
          0,
          outcome.review[p],
          record.previousKeys[i],
          revenue,
          spend,
          encodeFloat64(featureVector),
          encodeFloat64(scores.posteriors.subarray(p * k, (p + 1) * k)),
          outcome.review[p] > 0 ? outcome.reviewValue[p] : null,
          outcome.queued[p],
          reasons ? JSON.stringify(reasons) : null,
        );
        if (sampleAt[p] >= 0) insertSample.run(runId, sampleAt[p], table.customerIds[i], memberships.top[p], encodeFloat64(featureVector));
      }
      if ((i + 1) % 50_000 === 0) record.onProgress?.(i + 1);
    }
    for (const decision of record.carried) {
      insertDecision.run(runId, decision.customerId, decision.action, decision.segmentKey, decision.note, decision.reviewer, decision.decidedAt, decision.originRunId);
    }
    return runId;
  });
  return store.immediate();
}
