/**
 * The Certainty counts computed the direct way, as the view did before it kept a summary: read
 * every placed membership's confidence, margin and log density, apply the runs core's flag rule
 * (computeFlags) to all of them, and bin the confidences. Tests compare the fast path with it;
 * the scale benchmark times it as the reference.
 */
import type { Database } from 'better-sqlite3';
import type { CertaintySummary } from '../../src/api/contract.js';

/** The Certainty answer without the run's stored queue counts (which no slider changes), to compare with the rule. */
export function withoutQueue({ queue: _queue, ...counts }: CertaintySummary): Omit<CertaintySummary, 'queue'> {
  return counts;
}
import { computeFlags, type FlagThresholds } from '../../src/runs/flags.js';

export interface CertaintyColumnsByRule {
  confidence: Float64Array;
  margin: Float64Array;
  logDensity: Float64Array;
}

export function readColumnsByRule(db: Database, runId: number): CertaintyColumnsByRule {
  const rows = db
    .prepare('SELECT confidence, margin, log_density FROM run_memberships WHERE run_id = ? AND segment_index IS NOT NULL')
    .raw()
    .all(runId) as [number, number, number][];
  const columns = { confidence: new Float64Array(rows.length), margin: new Float64Array(rows.length), logDensity: new Float64Array(rows.length) };
  rows.forEach(([confidence, margin, logDensity], i) => {
    columns.confidence[i] = confidence;
    columns.margin[i] = margin;
    columns.logDensity[i] = logDensity;
  });
  return columns;
}

export function certaintyByRule(
  runId: number,
  columns: CertaintyColumnsByRule,
  input: FlagThresholds & { bins: number },
): Omit<CertaintySummary, 'queue'> {
  const flags = computeFlags(columns.confidence, columns.margin, columns.logDensity, input);
  const histogram = new Array<number>(input.bins).fill(0);
  let borderline = 0;
  let atypical = 0;
  for (let i = 0; i < columns.confidence.length; i++) {
    histogram[Math.min(input.bins - 1, Math.floor(columns.confidence[i] * input.bins))] += 1;
    borderline += flags.borderline[i];
    atypical += flags.atypical[i];
  }
  return {
    runId,
    customers: columns.confidence.length,
    confidenceHistogram: histogram.map((customers, b) => ({ from: b / input.bins, to: (b + 1) / input.bins, customers })),
    borderline,
    atypical,
    atypicalLogDensityBelow: flags.atypicalLogDensityBelow,
  };
}
