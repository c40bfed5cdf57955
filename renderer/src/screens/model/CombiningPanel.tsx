/*
 * The Model screen's components → segments: the combining tree, the entropy curve with the level
 * in use and the automatic choice marked, and picking a level (a regroup of the stored run, with
 * progress and cancel). Test ids: model-combining, combining-tree, entropy-curve,
 * entropy-against, combining-caption, level-select, level-apply, level-auto, regroup-task
 * (with -bar, -cancel, -dismiss), regroup-result, combining-segments.
 */
import { useEffect, useMemo, useState } from 'react';
import type { RunSegmentation, SegmentProfile, SegmentsResult } from '../../../../src/api/contract.js';
import { useApi, useFormat, useLoad } from '../../app/client-context.js';
import { RegroupPanel, useRegroup } from '../../app/regroup.js';
import { useWorkspace } from '../../app/workspace.js';
import { combiningTreeOption, entropyCurveOption, type SegmentLook } from '../../charts/combining-charts.js';
import { colourOf, symbolOf } from '../../charts/segment-charts.js';
import { Chart } from '../../components/Chart.js';
import { ErrorNote, Loading } from '../../components/Notice.js';
import { SegmentChip } from '../../components/SegmentChip.js';
import { countOf, type Formatters } from '../../lib/format.js';
import { ui } from '../../lib/palette.js';

const methodWords: Record<RunSegmentation['method'], string> = {
  auto: 'chosen where the entropy curve flattens',
  level: 'a level picked by hand',
  hand: 'merged or split by hand',
};

export function CombiningPanel({ runId, onRegrouped }: { runId: number; onRegrouped: () => void }) {
  const api = useApi();
  const format = useFormat();
  const { segments } = useWorkspace();
  const [nonce, setNonce] = useState(0);
  const segmentation = useLoad(() => api.segmentation({ runId }), `segmentation:${runId}:${nonce}`);
  const regroup = useRegroup(runId, () => {
    setNonce((n) => n + 1);
    onRegrouped();
  });
  const [against, setAgainst] = useState<'segments' | 'merged'>('segments');
  const data = segmentation.data;
  const [level, setLevel] = useState<number | null>(null);
  useEffect(() => {
    if (data) setLevel(data.currentLevel ?? data.segmentCount);
  }, [data]);

  // Segment colours follow spend rank, as everywhere: the profiles know it. Matched by key, so a
  // profile list read before a regroup never lends its colours to the new segments.
  const profileOf = useMemo(() => profileFinder(data, segments), [data, segments]);
  const look: SegmentLook = useMemo(
    () => ({
      colour: (segment) => {
        const profile = profileOf(segment);
        return profile ? colourOf(profile) : ui.inkSoft;
      },
      symbol: (segment) => {
        const profile = profileOf(segment);
        return profile ? symbolOf(profile) : 'circle';
      },
      name: (segment) => profileOf(segment)?.name ?? data?.segments.find((entry) => entry.segment === segment)?.name ?? `segment ${segment + 1}`,
    }),
    [profileOf, data],
  );
  const tree = useMemo(() => (data ? combiningTreeOption(data, look, format) : null), [data, look, format]);
  const curve = useMemo(() => (data ? entropyCurveOption(data, against, format) : null), [data, against, format]);

  return (
    <div className="panel" data-testid="model-combining">
      <div className="panel-head">
        <h2>From components to segments</h2>
        {data ? (
          <span className="quiet" data-testid="combining-caption">
            {countOf(data.components, 'component', format)} ({data.covariance}) combined into {countOf(data.segmentCount, 'segment', format)}: {methodWords[data.method]}.
          </span>
        ) : null}
      </div>
      {segmentation.error ? <ErrorNote error={segmentation.error} onRetry={segmentation.reload} /> : null}
      {!data ? (
        segmentation.loading ? <Loading what="the combining tree" /> : null
      ) : (
        <>
          <div className="two-up">
            <div>
              <h3 className="chart-title">Combining tree</h3>
              {tree ? <Chart option={tree} label="Dendrogram of the components, joined in the order they are combined, at the entropy of each level" height={320} testId="combining-tree" /> : null}
              <p className="caption">
                Each join combines two groups of components; lower joins made memberships more certain. Joins inside a segment wear its colour.
              </p>
            </div>
            <div>
              <div className="chart-title-row">
                <h3 className="chart-title">Entropy by level</h3>
                <label className="quiet">
                  across
                  <select value={against} onChange={(e) => setAgainst(e.target.value as typeof against)} data-testid="entropy-against">
                    <option value="segments">number of segments</option>
                    <option value="merged">customers merged</option>
                  </select>
                </label>
              </div>
              {curve ? (
                <Chart
                  option={curve}
                  label="Entropy of each level of the combining hierarchy; click a point to choose that level"
                  height={320}
                  testId="entropy-curve"
                  onItemClick={(item) => {
                    const count = (item as { segmentCount?: number } | undefined)?.segmentCount;
                    if (typeof count === 'number') setLevel(count);
                  }}
                />
              ) : null}
              <p className="caption">
                Ringed: the automatic choice ({countOf(data.autoSegmentCount, 'segment', format)}): groups are merged only while the customers they hold are, on
                average, no surer between the two than 95 / 5, and merging stops where the curve flattens (the least-squares change point across customers
                merged would give {format.count(data.autoSegmentCountByMergedRows)}). Filled: the level in use{data.currentLevel === null ? ' (none: the segments were merged or split by hand)' : ''}.
              </p>
            </div>
          </div>
          <LevelPicker data={data} level={level} onLevel={setLevel} regroup={regroup} format={format} />
          <RegroupPanel regroup={regroup} format={format} />
          <SegmentsNow data={data} profileOf={profileOf} format={format} />
        </>
      )}
    </div>
  );
}

function LevelPicker({
  data,
  level,
  onLevel,
  regroup,
  format,
}: {
  data: RunSegmentation;
  level: number | null;
  onLevel: (level: number) => void;
  regroup: ReturnType<typeof useRegroup>;
  format: Formatters;
}) {
  const counts = data.levels.map((entry) => entry.segmentCount).sort((a, b) => b - a);
  const unchanged = level === data.currentLevel;
  return (
    <div className="level-picker">
      <label>
        use the level with
        <select value={level ?? ''} onChange={(e) => onLevel(Number(e.target.value))} data-testid="level-select">
          {counts.map((count) => (
            <option key={count} value={count}>
              {countOf(count, 'segment', format)}
              {count === data.autoSegmentCount ? ' (automatic)' : ''}
              {count === data.currentLevel ? ' (in use)' : ''}
            </option>
          ))}
        </select>
      </label>
      <button type="button" className="button" disabled={regroup.running || level === null || unchanged} onClick={() => level !== null && regroup.regroup({ level })} data-testid="level-apply">
        Use this level
      </button>
      <button
        type="button"
        className="button-quiet"
        disabled={regroup.running || (data.method === 'auto' && data.currentLevel === data.autoSegmentCount)}
        onClick={() => regroup.regroup({ level: 'auto' })}
        data-testid="level-auto"
      >
        Back to the automatic choice
      </button>
      <span className="hint">Changes this stored run in place: memberships, flags, the review queue, names and movement are recomputed. Renamed segments keep their names where they survive, and a segment that comes back with the same components gets its key and name back.</span>
    </div>
  );
}

function SegmentsNow({ data, profileOf, format }: { data: RunSegmentation; profileOf: (segment: number) => SegmentProfile | undefined; format: Formatters }) {
  return (
    <table className="compare combining-segments" data-testid="combining-segments">
      <thead>
        <tr>
          <th scope="col">segment</th>
          <th scope="col">components</th>
          <th scope="col">customers</th>
        </tr>
      </thead>
      <tbody>
        {data.segments.map((segment) => (
          <tr key={segment.key}>
            <th scope="row">
              <SegmentChip segment={profileOf(segment.segment)} fallback={segment.name} />
            </th>
            <td>{segment.components.map((component) => `C${component + 1}`).join(', ')}</td>
            <td>{format.count(segment.customers)}</td>
          </tr>
        ))}
      </tbody>
    </table>
  );
}

/** The profile of a segment of the segmentation, found by its key. */
function profileFinder(data: RunSegmentation | null, segments: SegmentsResult | null): (segment: number) => SegmentProfile | undefined {
  const byKey = new Map((segments?.segments ?? []).map((profile) => [profile.key, profile]));
  const keyOf = new Map((data?.segments ?? []).map((entry) => [entry.segment, entry.key]));
  return (segment) => byKey.get(keyOf.get(segment) ?? '');
}
