import { createContext, useContext } from 'react';
import type { AppInfo, DatabaseInfo, ModelOptions, RunListItem, SegmentProfile, SegmentsResult } from '../../../src/api/contract.js';
import type { ScreenId } from '../lib/navigation.js';

/** What every screen shares: the open database, the runs, the run in view and its segments. */
export interface Workspace {
  appInfo: AppInfo | null;
  database: DatabaseInfo | null;
  runs: RunListItem[];
  runId: number | null;
  segments: SegmentsResult | null;
  modelOptions: ModelOptions | null;
  /** The readable name of a feature ("spend per month"), its key when unknown. */
  featureLabel: (feature: string) => string;
  /** The unit the core gives a feature ('EUR', 'visits' …), '' when unknown. */
  featureUnit: (feature: string) => string;
  /** A demo load the shell started (first-start offer), for Sources to follow; null otherwise. */
  demoTaskId: string | null;
  clearDemoTask: () => void;
  setRunId: (runId: number) => void;
  navigate: (screen: ScreenId) => void;
  /** Re-read database counts and the run list (after an import, a run, the demo). */
  refreshDatabase: (selectLatestRun?: boolean, deferSummary?: boolean) => void;
  /** Re-read the segments of the run in view (after a rename or a review decision). */
  refreshSegments: () => void;
}

export const WorkspaceContext = createContext<Workspace | null>(null);

export function useWorkspace(): Workspace {
  const workspace = useContext(WorkspaceContext);
  if (!workspace) throw new Error('useWorkspace needs the App around it.');
  return workspace;
}

/** Segment lookup by model index, and display order (spend rank). */
export function segmentIndex(segments: SegmentsResult | null): {
  byIndex: Map<number, SegmentProfile>;
  ordered: SegmentProfile[];
  nameOf: (segment: number | null) => string;
} {
  const list = segments?.segments ?? [];
  const byIndex = new Map(list.map((segment) => [segment.segment, segment]));
  const ordered = [...list].sort((a, b) => a.spendRank - b.spendRank);
  return {
    byIndex,
    ordered,
    nameOf: (segment) => (segment === null ? '—' : byIndex.get(segment)?.name ?? `segment ${segment + 1}`),
  };
}
