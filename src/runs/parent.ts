/**
 * What a refresh needs from its parent run: the model with its features and fitted transforms,
 * its segments, every customer's placement, the members' moments in the parent's transformed
 * space (for drift warnings) and its review decisions (carried over to the new run).
 */
import type { Database } from 'better-sqlite3';
import { InputError } from '../errors.js';
import { transformValue, type FeatureTransform } from '../features/transforms.js';
import { modelFromJSON, type MixtureModel } from '../model/index.js';
import { decodeFloat64 } from './blobs.js';
import { segmentMoments, type SegmentMoments } from './movement.js';
import type { ReviewAction, SegmentationMethod, SegmentTrait } from '../api/contract.js';

export interface ParentDecision {
  customerId: string;
  action: ReviewAction;
  segmentKey: string | null;
  note: string | null;
  reviewer: string | null;
  decidedAt: string;
  /** The run the decision was first made in. */
  originRunId: number;
}

export interface ParentRun {
  runId: number;
  asOf: string;
  features: string[];
  transforms: Record<string, FeatureTransform>;
  model: MixtureModel;
  /** Its segments (index = segment index), each with its components. */
  segments: { index: number; key: string; name: string; renamed: boolean; share: number; components: number[]; traits: SegmentTrait[] }[];
  /** Customer → segment index (-1 when too new there). */
  segmentOf: Map<string, number>;
  /** Members' moments per segment over the model features, in the parent's transformed space. */
  moments: SegmentMoments;
  decisions: ParentDecision[];
  /** How its segmentation was chosen (a rescore keeps it). */
  segmentation: { method: SegmentationMethod };
}

interface RunRow {
  run_id: number;
  as_of: string;
  features: string;
  stored_features: string;
  transforms: string;
  model: string;
  method: SegmentationMethod | null;
}

/** The customer's segment key in the parent run, or null when not placed there (or without a parent). */
export function previousKeyOf(parent: ParentRun | null, customerId: string): string | null {
  const before = parent?.segmentOf.get(customerId);
  return before === undefined || before < 0 ? null : (parent!.segments[before]?.key ?? null);
}

/** The latest run with an as-of date before `asOf` (ties: the newest run), or null. */
export function latestEarlierRunId(db: Database, asOf: string): number | null {
  const row = db.prepare('SELECT run_id FROM runs WHERE as_of < ? ORDER BY as_of DESC, run_id DESC LIMIT 1').get(asOf) as
    | { run_id: number }
    | undefined;
  return row ? row.run_id : null;
}

export function loadParentRun(db: Database, runId: number): ParentRun {
  const row = db
    .prepare("SELECT run_id, as_of, features, stored_features, transforms, model, json_extract(segmentation, '$.method') AS method FROM runs WHERE run_id = ?")
    .get(runId) as
    | RunRow
    | undefined;
  if (!row) {
    const known = db.prepare('SELECT run_id FROM runs ORDER BY run_id').pluck().all() as number[];
    throw new InputError(`There is no run ${runId} to use as the parent; runs in this database: ${known.length ? known.join(', ') : 'none'}.`);
  }
  const features = JSON.parse(row.features) as string[];
  const storedFeatures = JSON.parse(row.stored_features) as string[];
  const transforms = JSON.parse(row.transforms) as Record<string, FeatureTransform>;
  const model = modelFromJSON(JSON.parse(row.model));
  const segments = (
    db
      .prepare('SELECT segment_index, segment_key, name, renamed, share, components, traits FROM run_segments WHERE run_id = ? ORDER BY segment_index')
      .all(runId) as { segment_index: number; segment_key: string; name: string; renamed: number; share: number; components: string; traits: string }[]
  ).map((segment) => ({
    index: segment.segment_index,
    key: segment.segment_key,
    name: segment.name,
    renamed: segment.renamed === 1,
    share: segment.share,
    components: JSON.parse(segment.components) as number[],
    traits: JSON.parse(segment.traits) as SegmentTrait[],
  }));

  const positions = features.map((feature) => storedFeatures.indexOf(feature));
  const segmentOf = new Map<string, number>();
  const labels: number[] = [];
  const columns = features.map(() => [] as number[]);
  for (const [customerId, segment, blob] of db
    .prepare('SELECT customer_id, segment_index, features FROM run_memberships WHERE run_id = ?')
    .raw()
    .iterate(runId) as Iterable<[string, number | null, Buffer]>) {
    segmentOf.set(customerId, segment ?? -1);
    if (segment === null) continue;
    const values = decodeFloat64(blob);
    labels.push(segment);
    features.forEach((feature, j) => columns[j].push(transformValue(feature, transforms[feature], values[positions[j]])));
  }
  const moments = segmentMoments(
    columns.map((column) => Float64Array.from(column)),
    Int32Array.from(labels),
    segments.length,
  );
  const decisions = (
    db
      .prepare(
        'SELECT customer_id, action, segment_key, note, reviewer, decided_at, carried_from_run_id FROM review_decisions WHERE run_id = ?',
      )
      .all(runId) as {
      customer_id: string;
      action: ReviewAction;
      segment_key: string | null;
      note: string | null;
      reviewer: string | null;
      decided_at: string;
      carried_from_run_id: number | null;
    }[]
  ).map((decision) => ({
    customerId: decision.customer_id,
    action: decision.action,
    segmentKey: decision.segment_key,
    note: decision.note,
    reviewer: decision.reviewer,
    decidedAt: decision.decided_at,
    originRunId: decision.carried_from_run_id ?? runId,
  }));
  return { runId, asOf: row.as_of, features, transforms, model, segments, segmentOf, moments, decisions, segmentation: { method: row.method ?? 'level' } };
}
