/**
 * The app's own scores of a features table, as the reference for the generated SQL: the run's
 * fitted transforms (src/features/transforms.ts), the engine's scoreRows (src/model), then
 * segments as sums of their components' posteriors (DESIGN.md §5), top two segments as scoreRows
 * picks its top two components, and the flags of src/runs/flags.ts against the stored cut.
 * With one segment per component this is exactly what a run stores; with a component → segment
 * map it is the segment-level result the scoring query must give.
 */
import { transformValue } from '../../../src/features/transforms.js';
import { scoreRows } from '../../../src/model/index.js';
import { isBorderline } from '../../../src/runs/flags.js';
import type { ScoringModel } from '../../../src/warehouse/index.js';

/** Customers with their model features in original units; NaN marks an empty value. */
export interface FeatureRows {
  customerIds: string[];
  /** columns[j][i]: feature j (model order) of customer i. */
  columns: Float64Array[];
}

/** Scores per customer; `segment` null where the row cannot be scored. */
export interface Scores {
  customerIds: string[];
  segment: (string | null)[];
  confidence: Float64Array;
  margin: Float64Array;
  borderline: Int8Array;
  atypical: Int8Array;
}

export function appScores(scoring: ScoringModel, rows: FeatureRows): Scores {
  const { model, features, transforms, segments, thresholds } = scoring;
  const n = rows.customerIds.length;
  const d = features.length;
  const k = model.components;
  const S = segments.names.length;
  const values = new Float64Array(n * d);
  for (let i = 0; i < n; i++) for (let j = 0; j < d; j++) values[i * d + j] = transformValue(features[j], transforms[j], rows.columns[j][i]);
  const memberships = scoreRows(model, { values, rows: n, cols: d, columnNames: features });
  const result: Scores = {
    customerIds: rows.customerIds,
    segment: new Array(n),
    confidence: new Float64Array(n),
    margin: new Float64Array(n),
    borderline: new Int8Array(n),
    atypical: new Int8Array(n),
  };
  const segmentPosterior = new Float64Array(S);
  const seen = new Uint8Array(S);
  for (let i = 0; i < n; i++) {
    seen.fill(0);
    for (let c = 0; c < k; c++) {
      const s = segments.ofComponent[c];
      const posterior = memberships.posteriors[i * k + c];
      segmentPosterior[s] = seen[s] ? segmentPosterior[s] + posterior : posterior;
      seen[s] = 1;
    }
    let top = 0;
    let second = -1;
    for (let s = 1; s < S; s++) {
      if (segmentPosterior[s] > segmentPosterior[top]) {
        second = top;
        top = s;
      } else if (second < 0 || segmentPosterior[s] > segmentPosterior[second]) {
        second = s;
      }
    }
    const confidence = segmentPosterior[top];
    const margin = second < 0 ? 1 : segmentPosterior[top] - segmentPosterior[second];
    result.segment[i] = segments.names[top];
    result.confidence[i] = confidence;
    result.margin[i] = margin;
    result.borderline[i] = isBorderline(confidence, margin, { ...thresholds, atypicalPercentile: 0 }) ? 1 : 0;
    const cut = thresholds.atypicalLogDensityBelow;
    result.atypical[i] = cut !== null && memberships.logDensity[i] < cut ? 1 : 0;
  }
  return result;
}

export interface Agreement {
  customers: number;
  /** Customers missing on either side. */
  missing: number;
  segmentMismatches: number;
  flagMismatches: number;
  /** Largest |a − b| / max(|a|, |b|) of the confidence (the top segment's posterior); NaN if either side lacks a value. */
  maxConfidenceDifference: number;
  /** Largest |a − b| / max(|a|, |b|) of the margin (top minus second posterior). */
  maxMarginDifference: number;
  /** Largest |a − b| of the margin: the margin is a difference of two posteriors, so near a tie its relative error is the posteriors' rounding over a small number. */
  maxMarginAbsoluteDifference: number;
  /** A few mismatching customers, for the failure message. */
  examples: string[];
}

export interface EngineScore {
  segment: string | null;
  confidence: number | null;
  margin: number | null;
  borderline: number | null;
  atypical: number | null;
}

function relative(a: number, b: number): number {
  if (a === b) return 0;
  return Math.abs(a - b) / Math.max(Math.abs(a), Math.abs(b));
}

/** Compares the engine's rows with the app's scores, customer by customer. */
export function compareScores(app: Scores, engine: Map<string, EngineScore>): Agreement {
  const agreement: Agreement = {
    customers: app.customerIds.length,
    missing: Math.max(0, engine.size - app.customerIds.length),
    segmentMismatches: 0,
    flagMismatches: 0,
    maxConfidenceDifference: 0,
    maxMarginDifference: 0,
    maxMarginAbsoluteDifference: 0,
    examples: [],
  };
  const note = (text: string) => void (agreement.examples.length < 5 && agreement.examples.push(text));
  app.customerIds.forEach((id, i) => {
    const row = engine.get(id);
    if (!row) {
      agreement.missing++;
      note(`${id}: no row`);
      return;
    }
    if (row.segment !== app.segment[i]) {
      agreement.segmentMismatches++;
      note(`${id}: segment ${row.segment} against ${app.segment[i]}`);
    }
    if (row.borderline !== app.borderline[i] || row.atypical !== app.atypical[i]) {
      agreement.flagMismatches++;
      note(`${id}: borderline/atypical ${row.borderline}/${row.atypical} against ${app.borderline[i]}/${app.atypical[i]}`);
    }
    const confidence = row.confidence ?? NaN;
    const margin = row.margin ?? NaN;
    agreement.maxConfidenceDifference = Math.max(agreement.maxConfidenceDifference, relative(confidence, app.confidence[i]));
    agreement.maxMarginDifference = Math.max(agreement.maxMarginDifference, relative(margin, app.margin[i]));
    agreement.maxMarginAbsoluteDifference = Math.max(agreement.maxMarginAbsoluteDifference, Math.abs(margin - app.margin[i]));
  });
  return agreement;
}
