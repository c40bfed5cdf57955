/**
 * Shapes of the runs core that the contract (src/api/contract) does not carry: progress and
 * options of a run, and one customer as the export streams it. Everything the screens and the
 * CLI see (summaries, profiles, memberships, review items, movement) is the contract's own type.
 *
 * Conventions: money in euros (numbers, two decimals of precision), shares in [0, 1], dates ISO
 * `YYYY-MM-DD`, segment `index` = the segment's 0-based position in the run's segmentation (each
 * segment one or more model components), `key` = a stable id that carries a segment across months
 * ("S1", "S2", …), `name` = what the analyst sees (renamable).
 */
import type { CombiningLevelSummary, ReviewAction, SegmentationMethod } from '../api/contract.js';
import type { FitProgress } from '../model/index.js';

/** Progress of a run: its phase and, during fitting, the engine's own report. */
export interface RunProgress {
  phase: 'features' | 'transform' | 'fit' | 'score' | 'combine' | 'profiles' | 'movement' | 'store';
  /** Units done and total in this phase (0/0 when not countable). */
  done: number;
  total: number;
  message: string;
  fit?: FitProgress;
}

export interface RunOptions {
  signal?: AbortSignal;
  onProgress?: (progress: RunProgress) => void;
}

/** One customer as the export streams it. */
export interface ExportCustomerRow {
  customerId: string;
  finalSegmentName: string | null;
  modelSegmentName: string | null;
  confidence: number | null;
  secondSegmentName: string | null;
  secondProbability: number | null;
  borderline: boolean;
  atypical: boolean;
  tooNew: boolean;
  excluded: boolean;
  decision: ReviewAction | null;
  /** 1 yes, 0 no, null unknown (no customers row or empty). */
  marketingConsent: 0 | 1 | null;
  revenue: number;
  /** Stored features in original units, keyed by name (null where missing). */
  features: Record<string, number | null>;
}

/**
 * How a run's components are combined into segments, as stored with the run (runs.segmentation):
 * segments[s] lists segment s's component indices (ascending); the hierarchy summary is for the
 * screens. Runs stored before segments were made of components read as one segment per
 * component, method 'level', without a stored hierarchy (levels null: computed when asked for).
 */
export interface StoredSegmentation {
  method: SegmentationMethod;
  segments: number[][];
  autoSegmentCount: number | null;
  autoSegmentCountByMergedRows: number | null;
  levels: CombiningLevelSummary[] | null;
  /**
   * Segments this run showed before its latest regroups, by their exact components, with the key
   * and name they had when left (absent in runs stored before it was kept). A regroup that brings
   * back the same components brings back that key and the analyst's rename, so trying other
   * levels and returning loses neither the rename nor review decisions that move customers there.
   */
  shownBefore?: ShownSegment[];
}

/** A segment as it was when a regroup left it (see StoredSegmentation.shownBefore). */
export interface ShownSegment {
  components: number[];
  key: string;
  name: string;
  renamed: boolean;
  origin: 'first' | 'matched' | 'new';
  /** Its traits' words then, so a segment that comes back keeps words kept near a band edge. */
  traits?: { feature: string; words: string }[];
}
