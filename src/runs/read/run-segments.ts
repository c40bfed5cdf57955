/**
 * A run's segments as stored (run_segments), read fresh on every call because the analyst can
 * rename them: by index, by key and by name, with the profile JSON parsed only when asked for.
 */
import type { Database } from 'better-sqlite3';
import type { SegmentProfile, SegmentTrait } from '../../api/contract.js';
import { InputError } from '../../errors.js';
import type { StoredQuartiles } from '../profiles.js';

/** A segment as stored: the profile's own numbers, by segment index, with revenue in cents. */
export type StoredSegment = Pick<
  SegmentProfile,
  'key' | 'name' | 'defaultName' | 'renamed' | 'spendRank' | 'origin' | 'customers' | 'share' | 'revenueShare' | 'components'
> & {
  index: number;
  revenueCents: number;
};

/** The profile column: quartiles of every stored feature in original units. */
export interface StoredProfile {
  features: Record<string, StoredQuartiles | null>;
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
  components: string;
  default_name: string;
  renamed: number;
  traits: string;
}

export interface RunSegments {
  runId: number;
  /** In index order. */
  list: StoredSegment[];
  nameOf(index: number | null): string | null;
  keyOf(index: number | null): string | null;
  nameOfKey: ReadonlyMap<string, string>;
  indexOfKey: ReadonlyMap<string, number>;
  keys: ReadonlySet<string>;
  profileOf(index: number): StoredProfile;
  traitsOf(index: number): SegmentTrait[];
  /** Segment index of each model component. */
  segmentOfComponent: readonly number[];
  /** A segment by index, or by key, name or index written as text; InputError listing the run's segments otherwise. */
  find(reference: number | string): StoredSegment;
}

export function runSegments(db: Database, runId: number): RunSegments {
  const rows = db.prepare('SELECT * FROM run_segments WHERE run_id = ? ORDER BY segment_index').all(runId) as SegmentRow[];
  const list: StoredSegment[] = rows.map((row) => ({
    index: row.segment_index,
    key: row.segment_key,
    name: row.name,
    defaultName: row.default_name,
    renamed: row.renamed === 1,
    components: JSON.parse(row.components) as number[],
    spendRank: row.spend_rank,
    origin: row.origin,
    customers: row.customers,
    share: row.share,
    revenueCents: row.revenue_cents,
    revenueShare: row.revenue_share,
  }));
  const byIndex = new Map(list.map((segment) => [segment.index, segment]));
  const profiles = new Map<number, StoredProfile>();
  const segmentOfComponent: number[] = [];
  for (const segment of list) for (const component of segment.components) segmentOfComponent[component] = segment.index;
  return {
    runId,
    list,
    nameOf: (index) => (index === null ? null : (byIndex.get(index)?.name ?? null)),
    keyOf: (index) => (index === null ? null : (byIndex.get(index)?.key ?? null)),
    nameOfKey: new Map(list.map((segment) => [segment.key, segment.name])),
    indexOfKey: new Map(list.map((segment) => [segment.key, segment.index])),
    keys: new Set(list.map((segment) => segment.key)),
    profileOf(index) {
      let profile = profiles.get(index);
      if (!profile) {
        const row = rows.find((candidate) => candidate.segment_index === index);
        profile = row ? (JSON.parse(row.profile) as StoredProfile) : { features: {} };
        profiles.set(index, profile);
      }
      return profile;
    },
    traitsOf(index) {
      const row = rows.find((candidate) => candidate.segment_index === index);
      return row ? (JSON.parse(row.traits) as SegmentTrait[]) : [];
    },
    segmentOfComponent,
    find(reference) {
      const found = list.find((segment) =>
        typeof reference === 'number'
          ? segment.index === reference
          : segment.key === reference || segment.name === reference || String(segment.index) === reference,
      );
      if (!found) {
        const known = list.map((segment) => `${segment.index} "${segment.name}" (${segment.key})`).join(', ');
        throw new InputError(`Run ${runId} has no segment "${String(reference)}"; its segments are ${known}.`);
      }
      return found;
    },
  };
}
