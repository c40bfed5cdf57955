/**
 * Changing a stored run's segmentation in place (DESIGN.md §5): a level of the combining hierarchy
 * (a number of segments, or auto: where the entropy curve flattens), a merge of two segments,
 * or a split of one back into groups of its components. The segment memberships are re-summed
 * from the stored component posteriors (no refit), then flags, the review queue, names (renames
 * kept where a segment continues an old one: ./carry-keys.ts; a segment of exactly the components
 * of one the run showed before gets that one's key and rename back), profiles, movement and stability
 * are recomputed, and later runs' movement against this run too — all in one transaction, after
 * everything is computed, so a refusal or a cancel stores nothing. Review decisions stay as they
 * were made; one whose segment is gone leaves the customer in the model's segment.
 */
import type { Database } from 'better-sqlite3';
import type { RegroupResult, RegroupSegmentsInput, SegmentationMethod, StoredRunSettings } from '../api/contract.js';
import { throwIfAborted } from '../errors.js';
import { mergeSegments, splitSegment, type Segmentation } from '../model/index.js';
import { componentsKey } from './carry-keys.js';
import { chosenSegmentation, storedHierarchy, type LevelledHierarchy } from './combine.js';
import { movementAgainst } from './movement.js';
import { loadParentRun } from './parent.js';
import { insertSegmentRows, segmentColumns } from './persist.js';
import { getRunSummary } from './read/run-detail.js';
import { runSegments, type RunSegments } from './read/run-segments.js';
import { withHierarchy } from './read/segmentation.js';
import { storedRun } from './read/stored-run.js';
import { nextKeyNumber } from './run.js';
import { segmentPlaced } from './segmenting.js';
import { loadPlacement } from './stored-placement.js';
import type { ShownSegment } from './types.js';

export interface RegroupProgress {
  phase: 'read' | 'combine' | 'store';
  done: number;
  total: number;
  message: string;
}

export interface RegroupOptions {
  signal?: AbortSignal;
  onProgress?: (progress: RegroupProgress) => void;
}

/** The new grouping a change asks for, and how it is chosen; InputError (from the engine) when it cannot be made. */
function changedSegmentation(
  change: RegroupSegmentsInput['change'],
  hierarchy: LevelledHierarchy,
  current: Segmentation,
  segments: RunSegments,
): { segmentation: Segmentation; method: SegmentationMethod; words: string } {
  if ('level' in change) {
    const chosen = chosenSegmentation(hierarchy, { segmentCount: change.level });
    const count = chosen.segmentation.segments.length;
    const words =
      change.level === 'auto'
        ? `combined into ${count} segment${count === 1 ? '' : 's'} where the entropy curve flattens`
        : `combined into ${count} segment${count === 1 ? '' : 's'}`;
    return { ...chosen, words };
  }
  if ('merge' in change) {
    const [a, b] = change.merge.map((reference) => segments.find(reference));
    return { segmentation: mergeSegments(current, a.index, b.index), method: 'hand', words: `merged "${a.name}" and "${b.name}"` };
  }
  const target = segments.find(change.split.segment);
  return {
    segmentation: splitSegment(current, target.index, change.split.parts),
    method: 'hand',
    words: `split "${target.name}" into ${change.split.parts.map((part) => `components ${part.join(', ')}`).join(' and ')}`,
  };
}

export async function regroupSegments(db: Database, input: RegroupSegmentsInput, options: RegroupOptions = {}): Promise<RegroupResult> {
  const { runId } = input;
  const { signal } = options;
  const report = (phase: RegroupProgress['phase'], done: number, total: number, message: string) => options.onProgress?.({ phase, done, total, message });
  const run = storedRun(db, runId);
  const before = runSegments(db, runId);
  report('read', 0, run.customers, `Reading the ${run.customers} placed customers of run ${runId}`);
  const { placed, labels, notPlaced } = loadPlacement(db, runId, (done) => report('read', done, run.customers, `Reading customers of run ${runId}`));
  throwIfAborted(signal);

  report('combine', 0, 1, `Combining ${run.k} components`);
  // The hierarchy stored with the run: the same posteriors would combine the same way again.
  const stored = withHierarchy(db, runId, run.segmentation);
  const hierarchy = storedHierarchy(run.k, stored.levels);
  const current: Segmentation = { components: run.k, segments: run.segmentation.segments.map((group) => [...group]) };
  const { segmentation, method, words } = changedSegmentation(input.change, hierarchy, current, before);
  const parent = run.parentRunId === null ? null : loadParentRun(db, run.parentRunId);
  const shownBefore = withSegmentsLeft(rememberedSegments(stored.shownBefore, run.k), before);
  const segmentOf = new Map<string, number>();
  placed.customerIds.forEach((customerId, p) => segmentOf.set(customerId, labels[p]));
  const outcome = segmentPlaced({
    placed,
    notPlaced,
    segmentation,
    requireMembers: true,
    modelFeatures: run.features,
    thresholds: run.settings,
    reviewMoversBelowConfidence: run.settings.reviewMoversBelowConfidence,
    reviewCapacity: run.settings.reviewCapacity,
    earlier: {
      kind: 'members',
      segments: before.list.map(({ index, key, name, renamed, origin }) => ({ index, key, name, renamed, origin, traits: before.traitsOf(index) })),
      segmentOf,
      shownBefore,
    },
    parent,
    nextKeyNumber: nextKeyNumber(db),
  });
  throwIfAborted(signal);

  const settings: StoredRunSettings = {
    ...run.settings,
    segmentCount: method === 'auto' ? 'auto' : segmentation.segments.length,
    segmentation: method === 'hand' ? segmentation.segments.map((group) => [...group]) : null,
  };
  const children = db.prepare('SELECT run_id FROM runs WHERE parent_run_id = ? ORDER BY run_id').pluck().all(runId) as number[];
  report('store', 0, placed.customerIds.length, 'Storing the new segments');
  const updateMembership = db.prepare(`
    UPDATE run_memberships SET segment_index = ?, confidence = ?, margin = ?, second_index = ?, second_probability = ?,
      borderline = ?, atypical = ?, review = ?, review_value = ?, queued = ?
    WHERE run_id = ? AND customer_id = ?`);
  db.transaction(() => {
    db.prepare('DELETE FROM run_segments WHERE run_id = ?').run(runId);
    insertSegmentRows(db, runId, outcome);
    const { memberships, flags } = outcome;
    placed.customerIds.forEach((customerId, p) => {
      const second = memberships.second[p];
      updateMembership.run(
        memberships.top[p],
        memberships.confidence[p],
        memberships.margin[p],
        second >= 0 ? second : null,
        second >= 0 ? memberships.secondProbability[p] : null,
        flags.borderline[p],
        flags.atypical[p],
        outcome.review[p],
        outcome.review[p] > 0 ? outcome.reviewValue[p] : null,
        outcome.queued[p],
        runId,
        customerId,
      );
      if ((p + 1) % 50_000 === 0) report('store', p + 1, placed.customerIds.length, 'Storing the new segments');
    });
    db.prepare(
      `UPDATE run_samples SET segment_index = (SELECT m.segment_index FROM run_memberships m WHERE m.run_id = run_samples.run_id AND m.customer_id = run_samples.customer_id)
       WHERE run_id = ?`,
    ).run(runId);
    const columns = segmentColumns(outcome, { ...stored, method, segments: segmentation.segments.map((group) => [...group]), shownBefore });
    db.prepare(
      `UPDATE runs SET borderline = @borderline, atypical = @atypical, atypical_log_density_below = @atypicalCut, stability = @stability,
         retired = @retired, movement = @movement, segmentation = @segmentation, settings = @settings, revision = revision + 1
       WHERE run_id = @runId`,
    ).run({ ...columns, settings: JSON.stringify(settings), runId });
    for (const child of children) updateLaterRun(db, runId, child);
  }).immediate();

  const keysBefore = new Set(before.list.map((segment) => segment.key));
  const keysAfter = new Set(outcome.segments.map((segment) => segment.key));
  const keysShownBefore = new Set(shownBefore.map((segment) => segment.key));
  const arrived = outcome.segments.filter((segment) => !keysBefore.has(segment.key));
  return {
    summary: getRunSummary(db, runId),
    change: words,
    keptKeys: [...keysAfter].filter((key) => keysBefore.has(key)),
    retired: before.list.filter((segment) => !keysAfter.has(segment.key)).map((segment) => segment.name),
    added: arrived.filter((segment) => !keysShownBefore.has(segment.key)).map((segment) => segment.name),
    returned: arrived.filter((segment) => keysShownBefore.has(segment.key)).map((segment) => segment.name),
    laterRunsUpdated: children,
  };
}

/** At most this many earlier segments are remembered per run (the newest), to keep the run row small. */
const SHOWN_BEFORE_LIMIT = 200;

/**
 * The remembered segments as stored, keeping only well-formed entries of this model's components:
 * they are a convenience, so a database edited by hand loses them rather than the regroup.
 */
function rememberedSegments(stored: unknown, components: number): ShownSegment[] {
  if (!Array.isArray(stored)) return [];
  return stored.filter(
    (entry): entry is ShownSegment =>
      typeof entry === 'object' &&
      entry !== null &&
      Array.isArray(entry.components) &&
      entry.components.length > 0 &&
      entry.components.every((c: unknown) => Number.isInteger(c) && (c as number) >= 0 && (c as number) < components) &&
      typeof entry.key === 'string' &&
      typeof entry.name === 'string' &&
      typeof entry.renamed === 'boolean' &&
      ['first', 'matched', 'new'].includes(entry.origin),
  );
}

/**
 * The run's remembered segments after leaving the current ones: one per set of components, the
 * newest state of each (a segment left now replaces an older one of the same components).
 */
function withSegmentsLeft(remembered: readonly ShownSegment[], left: RunSegments): ShownSegment[] {
  const byComponents = new Map<string, ShownSegment>();
  const leftNow = left.list.map(({ index, components, key, name, renamed, origin }) => ({
    components: [...components],
    key,
    name,
    renamed,
    origin,
    traits: left.traitsOf(index).map(({ feature, words }) => ({ feature, words })),
  }));
  for (const segment of [...remembered, ...leftNow]) {
    const id = componentsKey(segment.components);
    byComponents.delete(id);
    byComponents.set(id, segment);
  }
  return [...byComponents.values()].slice(-SHOWN_BEFORE_LIMIT);
}

/**
 * A later run compared with the regrouped one: its movement (matrix, stability, drift, retired)
 * and its customers' last-month keys are worked out again against the new segments. Its own
 * segments, flags and queue stay as they were made.
 */
function updateLaterRun(db: Database, parentRunId: number, childRunId: number): void {
  const parent = loadParentRun(db, parentRunId);
  const { placed, labels, notPlaced } = loadPlacement(db, childRunId);
  const segments = runSegments(db, childRunId).list;
  const segmentOf = new Map<string, number>();
  for (const customerId of notPlaced) segmentOf.set(customerId, -1);
  placed.customerIds.forEach((customerId, p) => segmentOf.set(customerId, labels[p]));
  const movement = movementAgainst(parent, { segmentOf, segments, shares: segments.map((segment) => segment.share), features: placed.features, columns: placed.columns, labels });
  db.prepare('UPDATE runs SET movement = ?, stability = ?, retired = ?, revision = revision + 1 WHERE run_id = ?').run(
    JSON.stringify(movement),
    movement.adjustedRandIndex,
    JSON.stringify(movement.retired),
    childRunId,
  );
  db.prepare(
    `UPDATE run_memberships SET previous_key = (
       SELECT s.segment_key FROM run_memberships p JOIN run_segments s ON s.run_id = p.run_id AND s.segment_index = p.segment_index
        WHERE p.run_id = @parentRunId AND p.customer_id = run_memberships.customer_id)
     WHERE run_id = @childRunId`,
  ).run({ parentRunId, childRunId });
}
