/** The Movement screen: month-over-month matrix against the parent run. */

export interface DriftWarning {
  segmentKey: string;
  segmentName: string;
  kind: 'mean-shift' | 'share-change';
  /** Feature for mean shifts; null for share changes. */
  feature: string | null;
  /** Shift in parent standard deviations, or share change in percentage points. */
  amount: number;
  message: string;
}
/** Movement against the parent run; `parentRunId` null (and everything empty) for a first run. */
export interface MovementResult {
  runId: number;
  parentRunId: number | null;
  parentSegments: { segment: number; key: string; name: string }[];
  currentSegments: { segment: number; key: string; name: string }[];
  /** matrix[i][j] = customers in parent segment i and current segment j. */
  matrix: number[][];
  /** Customers placed in both runs (the matrix's sum). */
  common: number;
  /** Placed now, not placed in the parent (new customers, or no longer too new). */
  entered: number;
  /** Placed in the parent, not placed now (lapsed, or too new again). */
  left: number;
  /** Adjusted Rand index on common customers, null without a parent (or fewer than two common customers). */
  stability: number | null;
  warnings: DriftWarning[];
  /** Refit only: parent segments without a match, and segments new this month. */
  retired: string[];
  added: string[];
}
