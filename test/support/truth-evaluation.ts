/**
 * Test support: how well a stored run recovers a generated chain's ground truth (truth.csv), and
 * what an analyst would see of it: segments with names, shares and spend medians, the adjusted
 * Rand index (ARI) of the run's segments against the truth on placed customers, borderline share,
 * atypical count and review queue size.
 *
 * Run-level figures and the queue come through the command line (`runs`, `review … list`), as a
 * user gets them. Per-customer segments and the segment profiles are read from the run's stored
 * tables (run_memberships, run_segments), the one place here that knows the storage; no command
 * lists every customer (exports leave out those without marketing consent, by design).
 */
import Database from 'better-sqlite3';
import { readFileSync } from 'node:fs';
import { quantile } from '../../src/features/quantiles.js';
import { adjustedRandIndex } from '../../src/model/index.js';
import { spendmixJson } from './cli-runner.js';

/** customer id → ground-truth label (a tier of the second chain, a profile of the demo). */
export type Truth = Map<string, string>;

/**
 * Reads a truth file: a header, then `customer_id,<label>[,…]` per line, plain comma-separated
 * values without quoting (as both generators write them). The second column is the label.
 */
export function readTruthFile(path: string): Truth {
  const lines = truthLines(path);
  const header = lines[0]?.split(',') ?? [];
  if (header[0] !== 'customer_id' || header.length < 2) throw new Error(`${path}: expected a header customer_id,<label>…; got "${lines[0] ?? ''}"`);
  const truth: Truth = new Map();
  for (let line = 1; line < lines.length; line++) {
    const [customerId, label] = lines[line].split(',');
    if (!customerId || !label) throw new Error(`${path}, line ${line + 1}: a customer id and a label are needed`);
    if (truth.has(customerId)) throw new Error(`${path}, line ${line + 1}: customer ${customerId} appears twice`);
    truth.set(customerId, label);
  }
  return truth;
}

/** A truth file's non-empty lines, header first. */
function truthLines(path: string): string[] {
  return readFileSync(path, 'utf8').split(/\r?\n/).filter((line) => line.length > 0);
}

/** Truth labels as codes for the ARI: each distinct label's place in sorted order, and those labels. */
function labelCodes(labels: readonly string[]): { names: string[]; codes: Int32Array } {
  const names = [...new Set(labels)].sort();
  const code = new Map(names.map((name, index) => [name, index]));
  return { names, codes: Int32Array.from(labels, (label) => code.get(label)!) };
}

export interface SegmentFigures {
  name: string;
  customers: number;
  /** Share of placed customers. */
  share: number;
  /** Median spend per month of the segment's customers, EUR (null when the run stored no spend). */
  spendPerMonthMedian: number | null;
}

export interface TruthEvaluation {
  runId: number;
  /** Gaussian components of the chosen model, and their covariance structure. */
  k: number;
  covariance: string;
  /** Segments an analyst sees (today one per component). */
  segments: number;
  /** Highest spend first. */
  segmentTable: SegmentFigures[];
  placed: number;
  tooNew: number;
  /** ARI of the run's segments against the truth labels, over placed customers. */
  ari: number;
  borderline: number;
  borderlineShare: number;
  atypical: number;
  /** Customers in the run's review queue (`review … list` total) and their share of placed customers. */
  queue: number;
  queueShare: number;
  /** Placed customers by truth label (rows, sorted) and segment (columns, as segmentTable). */
  crossTable: { truthLabels: string[]; segmentNames: string[]; counts: number[][] };
}

/** Each placed customer's truth label and segment index in a run (the ARI's input). */
export interface PlacedLabels {
  customerIds: string[];
  truthLabels: string[];
  segments: Int32Array;
}

interface RunListing {
  runs: { runId: number; k: number; covariance: string; customers: number; tooNew: number; borderline: number; atypical: number }[];
}

/** Placed customers of a run with their truth label; a placed customer missing from the truth is an error. */
export function placedLabels(dbPath: string, runId: number, truth: Truth): PlacedLabels {
  const db = new Database(dbPath, { readonly: true, fileMustExist: true });
  try {
    const rows = db
      .prepare('SELECT customer_id, segment_index FROM run_memberships WHERE run_id = ? AND segment_index IS NOT NULL ORDER BY customer_id')
      .raw()
      .all(runId) as [string, number][];
    const truthLabels = rows.map(([customerId]) => {
      const label = truth.get(customerId);
      if (label === undefined) throw new Error(`Customer ${customerId} of run ${runId} is not in the truth file.`);
      return label;
    });
    return { customerIds: rows.map(([customerId]) => customerId), truthLabels, segments: Int32Array.from(rows, ([, segment]) => segment) };
  } finally {
    db.close();
  }
}

interface StoredSegment {
  index: number;
  name: string;
  customers: number;
  share: number;
  spendPerMonthMedian: number | null;
}

function storedSegments(dbPath: string, runId: number): StoredSegment[] {
  const db = new Database(dbPath, { readonly: true, fileMustExist: true });
  try {
    const rows = db
      .prepare('SELECT segment_index, name, customers, share, profile FROM run_segments WHERE run_id = ? ORDER BY spend_rank')
      .all(runId) as { segment_index: number; name: string; customers: number; share: number; profile: string }[];
    return rows.map((row) => {
      const profile = JSON.parse(row.profile) as { features?: Record<string, { median: number } | null> };
      return {
        index: row.segment_index,
        name: row.name,
        customers: row.customers,
        share: row.share,
        spendPerMonthMedian: profile.features?.spend_per_month?.median ?? null,
      };
    });
  } finally {
    db.close();
  }
}

/**
 * The figures of run `runId` in the database at `dbPath` against `truth`. Every placed customer
 * must be in the truth; customers the run did not place (too new) are left out of the ARI.
 */
export async function evaluateAgainstTruth(dbPath: string, runId: number, truth: Truth): Promise<TruthEvaluation> {
  const listing = await spendmixJson<RunListing>('runs', '--db', dbPath);
  const run = listing.runs.find((candidate) => candidate.runId === runId);
  if (!run) throw new Error(`Run ${runId} is not in ${dbPath}.`);
  const queue = await spendmixJson<{ total: number }>('review', '--db', dbPath, '--run', String(runId), 'list', '--limit', '1');

  const labels = placedLabels(dbPath, runId, truth);
  if (labels.segments.length !== run.customers) {
    throw new Error(`Run ${runId} reports ${run.customers} placed customers but stores ${labels.segments.length}.`);
  }
  const { names: truthNames, codes: truthCodes } = labelCodes(labels.truthLabels);

  const segments = storedSegments(dbPath, runId);
  const column = new Map(segments.map((segment, position) => [segment.index, position]));
  const counts = truthNames.map(() => new Array<number>(segments.length).fill(0));
  labels.segments.forEach((segment, i) => counts[truthCodes[i]][column.get(segment)!]++);

  return {
    runId,
    k: run.k,
    covariance: run.covariance,
    segments: segments.length,
    segmentTable: segments.map(({ name, customers, share, spendPerMonthMedian }) => ({ name, customers, share, spendPerMonthMedian })),
    placed: run.customers,
    tooNew: run.tooNew,
    ari: adjustedRandIndex(truthCodes, labels.segments),
    borderline: run.borderline,
    borderlineShare: run.customers > 0 ? run.borderline / run.customers : 0,
    atypical: run.atypical,
    queue: queue.total,
    queueShare: run.customers > 0 ? queue.total / run.customers : 0,
    crossTable: { truthLabels: truthNames, segmentNames: segments.map((segment) => segment.name), counts },
  };
}

/** The evaluation as an analyst's plain-text report. */
export function describeEvaluation(evaluation: TruthEvaluation): string {
  const percent = (share: number) => `${(share * 100).toFixed(1)} %`;
  const euros = (value: number | null) => (value === null ? '-' : `EUR ${value.toFixed(0)}`);
  const nameWidth = Math.max(...evaluation.segmentTable.map((segment) => segment.name.length), 'segment'.length);
  const labelWidth = Math.max(...evaluation.crossTable.truthLabels.map((label) => label.length), 'truth'.length);
  return [
    `run ${evaluation.runId}: k = ${evaluation.k} components, ${evaluation.covariance} covariance, ${evaluation.segments} segments`,
    `placed ${evaluation.placed}, too new ${evaluation.tooNew}`,
    `${'segment'.padEnd(nameWidth)}  customers   share  spend/month median`,
    ...evaluation.segmentTable.map(
      (segment) =>
        `${segment.name.padEnd(nameWidth)}  ${String(segment.customers).padStart(9)}  ${percent(segment.share).padStart(6)}  ${euros(segment.spendPerMonthMedian)}`,
    ),
    `ARI against the truth (placed customers): ${evaluation.ari.toFixed(4)}`,
    `borderline ${evaluation.borderline} of ${evaluation.placed} (${percent(evaluation.borderlineShare)}), atypical ${evaluation.atypical}, ` +
      `review queue ${evaluation.queue} (${percent(evaluation.queueShare)} of placed)`,
    `truth × segment (columns in the order above):`,
    ...evaluation.crossTable.truthLabels.map(
      (label, r) => `  ${label.padEnd(labelWidth)}  ${evaluation.crossTable.counts[r].map((count) => String(count).padStart(5)).join(' ')}`,
    ),
  ].join('\n');
}

/**
 * truth.csv's `stopped_on` column where a generator writes one (the second chain): customer id →
 * the last day a customer who drifted away shopped. Customers who kept coming have it empty and
 * are left out; a file without the column gives an empty map.
 */
export function readStoppedOn(path: string): Map<string, string> {
  const lines = truthLines(path);
  const column = (lines[0] ?? '').split(',').indexOf('stopped_on');
  const stoppedOn = new Map<string, string>();
  if (column < 0) return stoppedOn;
  for (let line = 1; line < lines.length; line++) {
    const fields = lines[line].split(',');
    const date = fields[column] ?? '';
    if (date === '') continue;
    if (!/^\d{4}-\d{2}-\d{2}$/.test(date)) throw new Error(`${path}, line ${line + 1}: stopped_on must be YYYY-MM-DD or empty; got "${date}"`);
    stoppedOn.set(fields[0], date);
  }
  return stoppedOn;
}

/** Where the customers who stopped coming ended up in a run, and the ARI without them. */
export interface DriftEvaluation {
  /** Per segment, highest spend first: its customers, those of them who stopped coming, and the median days from stopping to the as-of date. */
  bySegment: { name: string; customers: number; stopped: number; medianDaysSinceStopping: number | null }[];
  /** Placed customers who stopped coming. */
  stopped: number;
  /** ARI against the truth over the placed customers who kept coming (the others left out), and how many they are. */
  keptComing: number;
  ariKeptComing: number;
  /** Segments more than half of whose customers stopped coming. */
  segmentsMostlyStopped: number;
}

/** The run's segments against the customers who stopped coming (`readStoppedOn`), days counted to `asOf`. */
export function evaluateDrift(dbPath: string, runId: number, truth: Truth, stoppedOn: ReadonlyMap<string, string>, asOf: string): DriftEvaluation {
  const labels = placedLabels(dbPath, runId, truth);
  const segments = storedSegments(dbPath, runId);
  const asOfDay = Date.parse(`${asOf}T00:00:00Z`) / 86_400_000;
  const daysSince = new Map(segments.map((segment) => [segment.index, [] as number[]]));
  const keptTruth: string[] = [];
  const keptSegments: number[] = [];
  labels.customerIds.forEach((customerId, i) => {
    const stopped = stoppedOn.get(customerId);
    if (stopped === undefined) {
      keptTruth.push(labels.truthLabels[i]);
      keptSegments.push(labels.segments[i]);
    } else {
      daysSince.get(labels.segments[i])!.push(asOfDay - Date.parse(`${stopped}T00:00:00Z`) / 86_400_000);
    }
  });
  const bySegment = segments.map((segment) => {
    const days = daysSince.get(segment.index)!;
    return { name: segment.name, customers: segment.customers, stopped: days.length, medianDaysSinceStopping: days.length > 0 ? quantile(days, 0.5) : null };
  });
  return {
    bySegment,
    stopped: labels.customerIds.length - keptTruth.length,
    keptComing: keptTruth.length,
    ariKeptComing: adjustedRandIndex(labelCodes(keptTruth).codes, Int32Array.from(keptSegments)),
    segmentsMostlyStopped: bySegment.filter((segment) => 2 * segment.stopped > segment.customers).length,
  };
}

/** The drift evaluation as plain text. */
export function describeDrift(drift: DriftEvaluation): string {
  const nameWidth = Math.max(...drift.bySegment.map((segment) => segment.name.length), 'segment'.length);
  return [
    `customers who stopped coming (truth.csv stopped_on): ${drift.stopped} placed; by segment (median days since they stopped):`,
    ...drift.bySegment.map(
      (segment) =>
        `  ${segment.name.padEnd(nameWidth)}  ${String(segment.stopped).padStart(5)} of ${String(segment.customers).padStart(5)}` +
        (segment.medianDaysSinceStopping === null ? '' : `  (${segment.medianDaysSinceStopping} days)`),
    ),
    `segments made mostly of customers who stopped coming: ${drift.segmentsMostlyStopped}; the others: ${drift.bySegment.length - drift.segmentsMostlyStopped}`,
    `ARI against the truth on the ${drift.keptComing} placed customers who kept coming: ${drift.ariKeptComing.toFixed(4)}`,
  ].join('\n');
}
