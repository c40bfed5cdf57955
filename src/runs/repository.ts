/**
 * Reading stored runs, and the two small edits the analyst makes on them (review decisions and
 * segment names). This is what the app's API and the export call; the shapes are in ./types.ts.
 * Long lists are paged (offset/limit); the export streams every customer through one prepared
 * statement (`iterateRunCustomers`).
 */
import type { Database } from 'better-sqlite3';
import { InputError } from '../errors.js';
import { featureLabel } from '../features/definitions.js';
import { transformValue, type FeatureTransform } from '../features/transforms.js';
import { modelFromJSON, type CovarianceType, type MixtureModel, type SelectionCriterion, type SweepRow } from '../model/index.js';
import { decodeFloat64 } from './blobs.js';
import { finalSegmentKey, reviewReasons } from './review-rules.js';
import type {
  BorderlineItem,
  BorderlineWhy,
  DecideInput,
  ExportCustomerRow,
  FeatureQuartiles,
  Membership,
  MembershipQuery,
  Movement,
  Page,
  ResolvedRunSettings,
  ReviewAction,
  ReviewDecision,
  ReviewItem,
  RunDetail,
  RunListItem,
  RunSummary,
  SegmentProfile,
} from './types.js';
import { explainBorderline } from './why.js';

const DEFAULT_PAGE = 100;
const MAX_PAGE = 10_000;
const MAX_NAME_LENGTH = 80;
const MAX_NOTE_LENGTH = 2000;

interface RunRow {
  run_id: number;
  parent_run_id: number | null;
  created_at: string;
  as_of: string;
  window_months: number;
  mode: 'refit' | 'rescore';
  source: 'receipts' | 'imported';
  settings: string;
  features: string;
  stored_features: string;
  transforms: string;
  model: string;
  sweep: string;
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
  stability: number | null;
  warnings: string;
  retired: string;
  movement: string | null;
}

interface SegmentRow {
  segment_index: number;
  segment_key: string;
  name: string;
  spend_rank: number;
  origin: 'first' | 'matched' | 'new';
  customers: number;
  share: number;
  revenue_cents: number;
  revenue_share: number;
  profile: string;
}

interface MembershipRow {
  customer_id: string;
  segment_index: number | null;
  confidence: number | null;
  margin: number | null;
  second_index: number | null;
  second_probability: number | null;
  log_density: number | null;
  borderline: number;
  atypical: number;
  partial: number;
  too_new: number;
  review: number;
  previous_key: string | null;
  revenue_cents: number;
  spend_per_month: number | null;
  features: Buffer;
  action: ReviewAction | null;
  segment_key: string | null;
  note: string | null;
  reviewer: string | null;
  decided_at: string | null;
  carried_from_run_id: number | null;
}

const membershipColumns = `
  m.customer_id, m.segment_index, m.confidence, m.margin, m.second_index, m.second_probability, m.log_density,
  m.borderline, m.atypical, m.partial, m.too_new, m.review, m.previous_key, m.revenue_cents, m.spend_per_month, m.features,
  d.action, d.segment_key, d.note, d.reviewer, d.decided_at, d.carried_from_run_id`;
const membershipFrom = `
  FROM run_memberships m
  LEFT JOIN review_decisions d ON d.run_id = m.run_id AND d.customer_id = m.customer_id`;

function runRow(db: Database, runId: number): RunRow {
  if (!Number.isInteger(runId) || runId < 1) throw new InputError(`A run id is a whole number from 1; got ${String(runId)}.`);
  const row = db.prepare('SELECT * FROM runs WHERE run_id = ?').get(runId) as RunRow | undefined;
  if (!row) {
    const known = db.prepare('SELECT run_id FROM runs ORDER BY run_id').pluck().all() as number[];
    throw new InputError(`There is no run ${runId}; runs in this database: ${known.length ? known.join(', ') : 'none yet (run refresh first)'}.`);
  }
  return row;
}

function segmentRows(db: Database, runId: number): SegmentRow[] {
  return db.prepare('SELECT * FROM run_segments WHERE run_id = ? ORDER BY segment_index').all(runId) as SegmentRow[];
}

function pageBounds(page: { offset?: number; limit?: number } | undefined): { offset: number; limit: number } {
  const offset = page?.offset ?? 0;
  const limit = page?.limit ?? DEFAULT_PAGE;
  if (!Number.isInteger(offset) || offset < 0) throw new InputError(`The page offset must be a whole number from 0; got ${String(offset)}.`);
  if (!Number.isInteger(limit) || limit < 1 || limit > MAX_PAGE) {
    throw new InputError(`The page size must be a whole number from 1 to ${MAX_PAGE}; got ${String(limit)}.`);
  }
  return { offset, limit };
}

/** What the row mappers need about a run, read once per call. */
interface RunContext {
  row: RunRow;
  segments: SegmentRow[];
  nameOf: (index: number | null) => string | null;
  keyOf: (index: number | null) => string | null;
  nameOfKey: Map<string, string>;
  indexOfKey: Map<string, number>;
  keys: Set<string>;
}

function runContext(db: Database, runId: number): RunContext {
  const row = runRow(db, runId);
  const segments = segmentRows(db, runId);
  const byIndex = new Map(segments.map((segment) => [segment.segment_index, segment]));
  return {
    row,
    segments,
    nameOf: (index) => (index === null ? null : (byIndex.get(index)?.name ?? null)),
    keyOf: (index) => (index === null ? null : (byIndex.get(index)?.segment_key ?? null)),
    nameOfKey: new Map(segments.map((segment) => [segment.segment_key, segment.name])),
    indexOfKey: new Map(segments.map((segment) => [segment.segment_key, segment.segment_index])),
    keys: new Set(segments.map((segment) => segment.segment_key)),
  };
}

function decisionOf(row: Pick<MembershipRow, 'action' | 'segment_key' | 'note' | 'reviewer' | 'decided_at' | 'carried_from_run_id'>, nameOfKey: Map<string, string>): ReviewDecision | null {
  if (row.action === null || row.decided_at === null) return null;
  return {
    action: row.action,
    segmentKey: row.segment_key,
    segmentName: row.segment_key === null ? null : (nameOfKey.get(row.segment_key) ?? null),
    note: row.note,
    reviewer: row.reviewer,
    decidedAt: row.decided_at,
    carriedFromRunId: row.carried_from_run_id,
  };
}

function toMembership(row: MembershipRow, context: RunContext): Membership {
  const decision = decisionOf(row, context.nameOfKey);
  const final = row.segment_index === null ? { key: null, excluded: decision?.action === 'exclude' } : finalSegmentKey(context.keyOf(row.segment_index), decision, context.keys);
  return {
    customerId: row.customer_id,
    segment: row.segment_index,
    segmentName: context.nameOf(row.segment_index),
    confidence: row.confidence,
    margin: row.margin,
    secondSegment: row.second_index,
    secondSegmentName: context.nameOf(row.second_index),
    secondProbability: row.second_probability,
    logDensity: row.log_density,
    borderline: row.borderline === 1,
    atypical: row.atypical === 1,
    partial: row.partial === 1,
    tooNew: row.too_new === 1,
    revenue: row.revenue_cents / 100,
    spendPerMonth: row.spend_per_month,
    finalSegment: final.key === null ? null : (context.indexOfKey.get(final.key) ?? null),
    finalSegmentName: final.key === null ? null : (context.nameOfKey.get(final.key) ?? null),
    excluded: final.excluded,
    decision,
  };
}

// ---------------------------------------------------------------------------------------------

/** Every run, newest first. */
export function listRuns(db: Database): RunListItem[] {
  const rows = db.prepare('SELECT * FROM runs ORDER BY run_id DESC').all() as RunRow[];
  return rows.map((row) => ({
    ...runNumbers(row),
    createdAt: row.created_at,
    asOf: row.as_of,
    windowMonths: row.window_months,
    mode: row.mode,
  }));
}

/** The numbers every view of a run shows (RunSummary without its segment table). */
function runNumbers(row: RunRow): Omit<RunSummary, 'segments'> {
  return {
    runId: row.run_id,
    parentRunId: row.parent_run_id,
    k: row.k,
    covariance: row.covariance,
    bic: row.bic,
    customers: row.customers,
    tooNew: row.too_new,
    borderline: row.borderline,
    atypical: row.atypical,
    stability: row.stability,
  };
}

/** `'latest'` or an id → an existing run id; InputError naming the known ids otherwise. */
export function resolveRunId(db: Database, run: number | 'latest'): number {
  if (run === 'latest') {
    const latest = db.prepare('SELECT max(run_id) FROM runs').pluck().get() as number | null;
    if (latest === null) throw new InputError('The database has no runs yet; run refresh first.');
    return latest;
  }
  return runRow(db, run).run_id;
}

/** The `refresh --json` summary of a stored run. */
export function getRunSummary(db: Database, runId: number): RunSummary {
  const { row, segments } = runContext(db, runId);
  return summaryOf(row, segments);
}

function summaryOf(row: RunRow, segments: SegmentRow[]): RunSummary {
  // Key order as DESIGN.md §10 prints it: segments before stability.
  const { stability, ...numbers } = runNumbers(row);
  return {
    ...numbers,
    segments: [...segments]
      .sort((a, b) => a.spend_rank - b.spend_rank)
      .map((segment) => ({ name: segment.name, customers: segment.customers, share: segment.share, revenueShare: segment.revenue_share })),
    stability,
  };
}

/** Summary plus settings, features with fitted transforms, warnings, retired segments. */
export function getRunDetail(db: Database, runId: number): RunDetail {
  const { row, segments } = runContext(db, runId);
  return {
    summary: summaryOf(row, segments),
    settings: JSON.parse(row.settings) as ResolvedRunSettings,
    createdAt: row.created_at,
    features: JSON.parse(row.features) as string[],
    transforms: JSON.parse(row.transforms) as Record<string, FeatureTransform>,
    storedFeatures: JSON.parse(row.stored_features) as string[],
    criterion: row.criterion,
    logLikelihood: row.log_likelihood,
    icl: row.icl,
    warnings: JSON.parse(row.warnings) as string[],
    retired: JSON.parse(row.retired) as { key: string; name: string }[],
  };
}

/** The model-selection table (empty for a rescore). */
export function getSweepTable(db: Database, runId: number): SweepRow[] {
  return JSON.parse(runRow(db, runId).sweep) as SweepRow[];
}

/** Segments in spend order with profiles in money terms. */
export function listSegments(db: Database, runId: number): SegmentProfile[] {
  runRow(db, runId);
  return segmentRows(db, runId)
    .sort((a, b) => a.spend_rank - b.spend_rank)
    .map((segment) => {
      const profile = JSON.parse(segment.profile) as {
        features: Record<string, FeatureQuartiles | null>;
        weight: number;
        transformedMean: number[];
        transformedStdDev: number[];
      };
      return {
        index: segment.segment_index,
        key: segment.segment_key,
        name: segment.name,
        spendRank: segment.spend_rank,
        origin: segment.origin,
        customers: segment.customers,
        share: segment.share,
        revenue: segment.revenue_cents / 100,
        revenueShare: segment.revenue_share,
        features: profile.features,
        weight: profile.weight,
        transformedMean: profile.transformedMean,
        transformedStdDev: profile.transformedStdDev,
      };
    });
}

const sortColumns: Record<NonNullable<MembershipQuery['sort']>, string> = {
  customerId: 'm.customer_id',
  confidence: 'm.confidence',
  margin: 'm.margin',
  logDensity: 'm.log_density',
  revenue: 'm.revenue_cents',
  spend: 'm.spend_per_month',
};

const flagConditions: Record<NonNullable<MembershipQuery['flag']>, string> = {
  borderline: 'm.borderline = 1',
  atypical: 'm.atypical = 1',
  partial: 'm.partial = 1',
  tooNew: 'm.too_new = 1',
  review: 'm.review > 0',
  decided: 'd.action IS NOT NULL',
};

/** One page of customers, sortable and filterable by segment or flag. */
export function getMemberships(db: Database, runId: number, query: MembershipQuery = {}): Page<Membership> {
  const context = runContext(db, runId);
  const { offset, limit } = pageBounds(query);
  const sort = query.sort ?? 'customerId';
  if (!(sort in sortColumns)) throw new InputError(`Memberships can be sorted by ${Object.keys(sortColumns).join(', ')}; got "${String(sort)}".`);
  const conditions = ['m.run_id = @runId'];
  const params: Record<string, unknown> = { runId, limit, offset };
  if (query.segment === null) conditions.push('m.segment_index IS NULL');
  else if (query.segment !== undefined) {
    if (!context.segments.some((segment) => segment.segment_index === query.segment)) {
      throw new InputError(`Run ${runId} has segments 0 to ${context.segments.length - 1}; got ${String(query.segment)}.`);
    }
    conditions.push('m.segment_index = @segment');
    params.segment = query.segment;
  }
  if (query.flag !== undefined) {
    if (!(query.flag in flagConditions)) throw new InputError(`Unknown flag "${String(query.flag)}"; use one of ${Object.keys(flagConditions).join(', ')}.`);
    conditions.push(flagConditions[query.flag]);
  }
  const where = conditions.join(' AND ');
  const total = db.prepare(`SELECT count(*) ${membershipFrom} WHERE ${where}`).pluck().get(params) as number;
  const direction = query.descending ? 'DESC' : 'ASC';
  const rows = db
    .prepare(`SELECT ${membershipColumns} ${membershipFrom} WHERE ${where} ORDER BY ${sortColumns[sort]} ${direction}, m.customer_id LIMIT @limit OFFSET @offset`)
    .all(params) as MembershipRow[];
  return { total, offset, items: rows.map((row) => toMembership(row, context)) };
}

/** The run's model, its features and transforms: what the "why" needs. */
interface ModelContext {
  model: MixtureModel;
  features: string[];
  transforms: Record<string, FeatureTransform>;
}

function modelContext(row: RunRow): ModelContext {
  return {
    model: modelFromJSON(JSON.parse(row.model)),
    features: JSON.parse(row.features) as string[],
    transforms: JSON.parse(row.transforms) as Record<string, FeatureTransform>,
  };
}

function whyFor(row: MembershipRow, models: ModelContext, context: RunContext): BorderlineWhy | null {
  if (row.segment_index === null || row.second_index === null) return null;
  const original = decodeFloat64(row.features);
  // Model features are stored first, in model order.
  const x = models.features.map((name, j) => transformValue(name, models.transforms[name], original[j]));
  const names = Array.from({ length: models.model.components }, (_, c) => context.nameOf(c) ?? `segment ${c}`);
  return explainBorderline(models.model, x, row.segment_index, row.second_index, models.features, names);
}

/** Borderline customers (by spend at stake) with the features that pull them between segments. */
export function getBorderline(
  db: Database,
  runId: number,
  page?: { offset?: number; limit?: number; confidenceBelow?: number; marginBelow?: number },
): Page<BorderlineItem> {
  const context = runContext(db, runId);
  const models = modelContext(context.row);
  const { offset, limit } = pageBounds(page);
  // Thresholds other than the run's own (the Certainty screen's sliders) select by the stored
  // confidence and margin instead of the stored flag; both give the same set at the run's settings.
  const custom = page?.confidenceBelow !== undefined || page?.marginBelow !== undefined;
  const settings = custom ? (JSON.parse(context.row.settings) as ResolvedRunSettings) : null;
  const where = custom
    ? 'm.run_id = ? AND m.segment_index IS NOT NULL AND (m.confidence < ? OR m.margin < ?)'
    : 'm.run_id = ? AND m.borderline = 1';
  const params: number[] = custom
    ? [runId, page?.confidenceBelow ?? settings!.borderlineConfidence, page?.marginBelow ?? settings!.borderlineMargin]
    : [runId];
  const total = db.prepare(`SELECT count(*) FROM run_memberships m WHERE ${where}`).pluck().get(...params) as number;
  const rows = db
    .prepare(`SELECT ${membershipColumns} ${membershipFrom} WHERE ${where} ORDER BY m.revenue_cents DESC, m.customer_id LIMIT ? OFFSET ?`)
    .all(...params, limit, offset) as MembershipRow[];
  return {
    total,
    offset,
    items: rows.map((row) => ({ ...toMembership(row, context), why: whyFor(row, models, context)! })),
  };
}

/** The review queue ordered by spend at stake, with decisions here and last month. */
export function getReviewQueue(
  db: Database,
  runId: number,
  page?: { offset?: number; limit?: number; status?: 'all' | 'open' | 'done' },
): Page<ReviewItem> {
  const context = runContext(db, runId);
  const models = modelContext(context.row);
  const { offset, limit } = pageBounds(page);
  const status = page?.status ?? 'all';
  if (!['all', 'open', 'done'].includes(status)) throw new InputError(`The review status must be all, open or done; got "${String(status)}".`);
  const statusCondition = status === 'open' ? ' AND d.action IS NULL' : status === 'done' ? ' AND d.action IS NOT NULL' : '';
  const where = `m.run_id = ? AND m.review > 0${statusCondition}`;
  const total = db.prepare(`SELECT count(*) ${membershipFrom} WHERE ${where}`).pluck().get(runId) as number;
  const rows = db
    .prepare(`SELECT ${membershipColumns} ${membershipFrom} WHERE ${where} ORDER BY m.revenue_cents DESC, m.customer_id LIMIT ? OFFSET ?`)
    .all(runId, limit, offset) as MembershipRow[];

  const parentId = context.row.parent_run_id;
  const parentNames = new Map<string, string>();
  let parentDecision: ((customerId: string) => ReviewDecision | null) | null = null;
  if (parentId !== null) {
    for (const segment of segmentRows(db, parentId)) parentNames.set(segment.segment_key, segment.name);
    const statement = db.prepare(
      'SELECT action, segment_key, note, reviewer, decided_at, carried_from_run_id FROM review_decisions WHERE run_id = ? AND customer_id = ?',
    );
    parentDecision = (customerId) => {
      const found = statement.get(parentId, customerId) as MembershipRow | undefined;
      return found ? decisionOf(found, parentNames) : null;
    };
  }
  const medians = new Map(
    context.segments.map((segment) => [segment.segment_index, (JSON.parse(segment.profile) as { features: Record<string, FeatureQuartiles | null> }).features]),
  );
  const items = rows.map((row): ReviewItem => {
    const original = decodeFloat64(row.features);
    return {
      ...toMembership(row, context),
      reasons: reviewReasons(row.review),
      why: whyFor(row, models, context),
      featureComparison: models.features.map((feature, j) => ({
        feature,
        label: featureLabel(feature),
        value: Number.isNaN(original[j]) ? null : original[j],
        topMedian: row.segment_index === null ? null : (medians.get(row.segment_index)?.[feature]?.median ?? null),
        secondMedian: row.second_index === null ? null : (medians.get(row.second_index)?.[feature]?.median ?? null),
      })),
      previousSegmentName: row.previous_key === null ? null : (parentNames.get(row.previous_key) ?? null),
      previousDecision: parentDecision ? parentDecision(row.customer_id) : null,
    };
  });
  return { total, offset, items };
}

/** Movement against the parent; null for a first run. */
export function getMovement(db: Database, runId: number): Movement | null {
  const { row, segments } = runContext(db, runId);
  if (row.movement === null || row.parent_run_id === null) return null;
  const movement = JSON.parse(row.movement) as Movement;
  // Names may have changed since the run was stored: read them fresh by key.
  const currentNames = new Map(segments.map((segment) => [segment.segment_key, segment.name]));
  const parentNames = new Map(segmentRows(db, row.parent_run_id).map((segment) => [segment.segment_key, segment.name]));
  const rename =
    (names: Map<string, string>) =>
    <T extends { key: string; name: string }>(segment: T): T => ({ ...segment, name: names.get(segment.key) ?? segment.name });
  return {
    ...movement,
    parentSegments: movement.parentSegments.map(rename(parentNames)),
    currentSegments: movement.currentSegments.map(rename(currentNames)),
    retired: movement.retired.map(rename(parentNames)),
    added: movement.added.map(rename(currentNames)),
    warnings: movement.warnings.map((warning) => ({ ...warning, segmentName: currentNames.get(warning.segmentKey) ?? warning.segmentName })),
  };
}

/** A segment of the run by index, key or name; InputError listing the run's segments otherwise. */
function findSegment(context: RunContext, segment: number | string): SegmentRow {
  const found = context.segments.find((row) =>
    typeof segment === 'number' ? row.segment_index === segment : row.segment_key === segment || row.name === segment || String(row.segment_index) === segment,
  );
  if (!found) {
    const list = context.segments.map((row) => `${row.segment_index} "${row.name}" (${row.segment_key})`).join(', ');
    throw new InputError(`Run ${context.row.run_id} has no segment "${String(segment)}"; its segments are ${list}.`);
  }
  return found;
}

/** Records (or replaces) a decision on a customer of the run. */
export function decideReview(db: Database, input: DecideInput): ReviewDecision {
  const context = runContext(db, input.runId);
  if (typeof input.customerId !== 'string' || input.customerId === '') throw new InputError('A decision needs the customer id.');
  if (!['keep', 'move', 'exclude'].includes(input.action)) {
    throw new InputError(`The decision must be keep, move or exclude; got "${String(input.action)}".`);
  }
  const note = input.note?.trim() || null;
  if (note && note.length > MAX_NOTE_LENGTH) throw new InputError(`A note may hold at most ${MAX_NOTE_LENGTH} characters.`);
  const reviewer = input.reviewer?.trim() || null;
  const member = db
    .prepare('SELECT segment_index, too_new FROM run_memberships WHERE run_id = ? AND customer_id = ?')
    .get(input.runId, input.customerId) as { segment_index: number | null; too_new: number } | undefined;
  if (!member) throw new InputError(`Customer "${input.customerId}" is not part of run ${input.runId}.`);
  let segmentKey: string | null;
  if (input.action === 'move') {
    if (input.segment === undefined || input.segment === '') throw new InputError('A move needs the target segment (index, key or name).');
    segmentKey = findSegment(context, input.segment).segment_key;
  } else if (input.action === 'keep') {
    if (member.segment_index === null) throw new InputError(`Customer "${input.customerId}" is too new to place, so there is no segment to keep; move or exclude them instead.`);
    segmentKey = context.keyOf(member.segment_index);
  } else {
    segmentKey = null;
  }
  const decidedAt = new Date().toISOString();
  db.prepare(
    `INSERT INTO review_decisions (run_id, customer_id, action, segment_key, note, reviewer, decided_at, carried_from_run_id)
     VALUES (?, ?, ?, ?, ?, ?, ?, NULL)
     ON CONFLICT (run_id, customer_id) DO UPDATE SET action = excluded.action, segment_key = excluded.segment_key,
       note = excluded.note, reviewer = excluded.reviewer, decided_at = excluded.decided_at, carried_from_run_id = NULL`,
  ).run(input.runId, input.customerId, input.action, segmentKey, note, reviewer, decidedAt);
  return {
    action: input.action,
    segmentKey,
    segmentName: segmentKey === null ? null : (context.nameOfKey.get(segmentKey) ?? null),
    note,
    reviewer,
    decidedAt,
    carriedFromRunId: null,
  };
}

/** Renames a segment (by index, key or current name); names are unique within a run. */
export function renameSegment(db: Database, runId: number, segment: number | string, name: string): SegmentProfile {
  const context = runContext(db, runId);
  const target = findSegment(context, segment);
  const trimmed = typeof name === 'string' ? name.trim() : '';
  if (trimmed === '') throw new InputError('A segment name cannot be empty.');
  if (trimmed.length > MAX_NAME_LENGTH) throw new InputError(`A segment name may hold at most ${MAX_NAME_LENGTH} characters.`);
  const clash = context.segments.find((row) => row.name === trimmed && row.segment_index !== target.segment_index);
  if (clash) throw new InputError(`Run ${runId} already has a segment named "${trimmed}" (segment ${clash.segment_index}); pick another name.`);
  db.prepare('UPDATE run_segments SET name = ? WHERE run_id = ? AND segment_index = ?').run(trimmed, runId, target.segment_index);
  return listSegments(db, runId).find((row) => row.index === target.segment_index)!;
}

/**
 * Every customer of the run in id order, streamed from one prepared statement with consent from
 * the customers table. While the iterator is open the connection is busy: do not run other
 * statements on the same `db` until it finishes (use a second connection if needed).
 */
export function* iterateRunCustomers(db: Database, runId: number): IterableIterator<ExportCustomerRow> {
  const context = runContext(db, runId);
  const storedFeatures = JSON.parse(context.row.stored_features) as string[];
  const statement = db.prepare(
    `SELECT ${membershipColumns}, c.marketing_consent ${membershipFrom}
       LEFT JOIN customers c ON c.customer_id = m.customer_id
      WHERE m.run_id = ? ORDER BY m.customer_id`,
  );
  for (const row of statement.iterate(runId) as Iterable<MembershipRow & { marketing_consent: 0 | 1 | null }>) {
    const membership = toMembership(row, context);
    const values = decodeFloat64(row.features);
    const features: Record<string, number | null> = {};
    storedFeatures.forEach((name, j) => (features[name] = Number.isNaN(values[j]) ? null : values[j]));
    yield {
      customerId: row.customer_id,
      finalSegmentName: membership.finalSegmentName,
      modelSegmentName: membership.segmentName,
      confidence: row.confidence,
      secondSegmentName: membership.secondSegmentName,
      secondProbability: row.second_probability,
      borderline: membership.borderline,
      atypical: membership.atypical,
      tooNew: membership.tooNew,
      excluded: membership.excluded,
      decision: row.action,
      marketingConsent: row.marketing_consent ?? null,
      revenue: membership.revenue,
      features,
    };
  }
}
