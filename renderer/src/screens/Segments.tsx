/*
 * Segments screen. Test ids: screen-segments (data-painted="true" once cards and both charts are
 * drawn), segment-card-<spend rank>, segment-name-<spend rank>, segment-default-name-<spend rank>,
 * segment-traits-<spend rank>, segment-components-<spend rank>, segment-rename-<spend rank>,
 * segment-rename-input, segment-rename-save, segment-rename-cancel, segment-split-<spend rank>,
 * merge-first, merge-second, merge-apply, regroup-task (with -bar, -cancel, -dismiss),
 * regroup-result, scatter-x, scatter-y, segments-scatter, scatter-caption, distribution-feature,
 * segments-distribution, segments-no-run.
 *
 * Paint timing: the screen marks `segments:start` when it mounts and `segments:painted` once
 * every card and chart has drawn, with the measure `segments:paint` between them.
 */
import { useCallback, useEffect, useMemo, useRef, useState } from 'react';
import type { SegmentProfile } from '../../../src/api/contract.js';
import { useApi, useFormat, useLoad } from '../app/client-context.js';
import { RegroupPanel, useRegroup } from '../app/regroup.js';
import { segmentIndex, useWorkspace } from '../app/workspace.js';
import { colourOf, distributionOption, scatterOption } from '../charts/segment-charts.js';
import { Chart } from '../components/Chart.js';
import { ErrorNote, Loading } from '../components/Notice.js';
import { axisUnit, capitalise, countOf, formatInUnit, sampleCaption, traitText, type Formatters } from '../lib/format.js';
import { toApiError } from '../lib/task-state.js';
import { RunScreen } from './NoRun.js';

/** Points the scatter asks the core for; the core draws a seeded random sample of this size. */
const scatterSampleSize = 5000;

export function SegmentsScreen() {
  const { segments } = useWorkspace();
  return (
    <RunScreen
      screen="segments"
      title="Segments"
      render={(runId) =>
        segments ? (
          <SegmentsView key={runId} runId={runId} />
        ) : (
          <section className="screen" data-testid="screen-segments">
            <h1>Segments</h1>
            <Loading what="segments" />
          </section>
        )
      }
    />
  );
}

function FeatureSelect({ label, value, features, onChange, testId }: { label: string; value: number; features: string[]; onChange: (index: number) => void; testId: string }) {
  const { featureLabel } = useWorkspace();
  return (
    <label>
      {label}
      <select value={value} onChange={(e) => onChange(Number(e.target.value))} data-testid={testId}>
        {features.map((feature, i) => (
          <option key={feature} value={i}>
            {featureLabel(feature)}
          </option>
        ))}
      </select>
    </label>
  );
}

function SegmentsView({ runId }: { runId: number }) {
  const api = useApi();
  const format = useFormat();
  const { segments, featureLabel } = useWorkspace();
  const { ordered } = segmentIndex(segments);
  const features = segments?.features ?? [];
  const [xIndex, setXIndex] = useState(0);
  const [yIndex, setYIndex] = useState(Math.min(1, features.length - 1));
  const profileFeatures = ordered[0]?.profile.map((entry) => entry.feature) ?? features;
  const [distributionFeature, setDistributionFeature] = useState(profileFeatures[0] ?? features[0]);

  const root = useRef<HTMLElement>(null);
  const paintState = useRef({ scatter: false, distribution: false, reported: false });
  useEffect(() => {
    performance.clearMarks('segments:start');
    performance.clearMarks('segments:painted');
    performance.mark('segments:start');
  }, []);
  const notePainted = useCallback((part: 'scatter' | 'distribution') => {
    const state = paintState.current;
    state[part] = true;
    if (state.scatter && state.distribution && !state.reported) {
      state.reported = true;
      performance.mark('segments:painted');
      performance.measure('segments:paint', 'segments:start', 'segments:painted');
      root.current?.setAttribute('data-painted', 'true');
    }
  }, []);

  const sample = useLoad(() => api.segmentSample({ runId, limit: scatterSampleSize, seed: 0 }), `sample:${runId}`);
  const distribution = useLoad(
    distributionFeature ? () => api.featureDistribution({ runId, feature: distributionFeature, bins: 40 }) : null,
    `distribution:${runId}:${distributionFeature}`,
  );

  // A merge or split renumbers the run's segments: the sample and the distribution carry segment
  // indices, so they are read again with the new profiles.
  const regroup = useRegroup(runId, () => {
    sample.reload();
    distribution.reload();
  });

  const scatter = useMemo(() => {
    if (!sample.data || !segments) return null;
    return scatterOption(segments.segments, segments.components, sample.data, xIndex, yIndex, {
      x: `${featureLabel(features[xIndex])} (model scale)`,
      y: `${featureLabel(features[yIndex])} (model scale)`,
    });
  }, [sample.data, segments, xIndex, yIndex, features, featureLabel]);

  const distributionChart = useMemo(() => {
    if (!distribution.data || !segments) return null;
    return distributionOption(segments.segments, distribution.data, `${featureLabel(distribution.data.feature)}${axisUnit(distribution.data.unit)}`, format);
  }, [distribution.data, segments, featureLabel, format]);

  return (
    <section className="screen" data-testid="screen-segments" ref={root} data-painted="false">
      <header className="screen-head">
        <h1>Segments</h1>
        <p className="lede">
          {format.count(ordered.reduce((sum, s) => sum + s.customers, 0))} placed customers in {countOf(ordered.length, 'segment', format)} made of{' '}
          {countOf(segments?.components.length ?? 0, 'Gaussian component', format)}, ordered by spend.
        </p>
        <p className="hint" data-testid="segment-names-hint">
          Default names say where each segment&apos;s median customer sits among all placed customers, in fifths (very low to very high; &ldquo;top 1 %&rdquo; above
          99 %). How recently is said against the customers&apos; own rhythm, only where it sets a segment apart: &ldquo;just been in&rdquo; (median under a
          quarter of their usual gap), &ldquo;overdue&rdquo; (2 usual gaps or more without a visit), &ldquo;long absent&rdquo; (4 or more). A segment that
          continues an earlier one keeps a word while it stays near that band&apos;s edge, so names do not flip at an edge (&ldquo;word kept&rdquo;).
        </p>
      </header>
      <MergeBar segments={ordered} regroup={regroup} />
      <RegroupPanel regroup={regroup} format={format} />
      <div className="cards" data-testid="segment-cards">
        {ordered.map((segment) => (
          <SegmentCard key={segment.key} runId={runId} segment={segment} regroup={regroup} />
        ))}
      </div>

      <div className="panel">
        <div className="panel-head">
          <h2>Where the customers sit</h2>
          <div className="inline-controls">
            <FeatureSelect label="across" value={xIndex} features={features} onChange={setXIndex} testId="scatter-x" />
            <FeatureSelect label="up" value={yIndex} features={features} onChange={setYIndex} testId="scatter-y" />
          </div>
        </div>
        {sample.error ? <ErrorNote error={sample.error} onRetry={sample.reload} /> : null}
        {scatter && sample.data ? (
          <>
            <Chart option={scatter} label="Scatter of customers by segment with density ellipses" height={420} testId="segments-scatter" onPainted={() => notePainted('scatter')} />
            <p className="caption" data-testid="scatter-caption">
              {sampleCaption(sample.data.points.length, sample.data.totalCustomers, format)}. Solid rings: 1 standard deviation of
              each Gaussian component, in the colour of its segment (a segment of several components has several rings); dashed: 2. Axes are
              the model's transformed scale.
            </p>
          </>
        ) : sample.loading ? (
          <Loading what="the customer sample" />
        ) : null}
      </div>

      <div className="panel">
        <div className="panel-head">
          <h2>Distributions by segment</h2>
          <label>
            feature
            <select value={distributionFeature} onChange={(e) => setDistributionFeature(e.target.value)} data-testid="distribution-feature">
              {profileFeatures.map((feature) => (
                <option key={feature} value={feature}>
                  {featureLabel(feature)}
                </option>
              ))}
            </select>
          </label>
        </div>
        {distribution.error ? <ErrorNote error={distribution.error} onRetry={distribution.reload} /> : null}
        {distributionChart ? (
          <>
            <Chart option={distributionChart} label="Distribution of the chosen feature per segment" height={300} testId="segments-distribution" onPainted={() => notePainted('distribution')} />
            <p className="caption" data-testid="distribution-caption">
              {distribution.data ? `${capitalise(sampleCaption(distribution.data.customersUsed, distribution.data.totalCustomers, format))}, binned in the core. ` : ''}
              Each line is a share of its own segment; the first and last bins also hold the lowest and highest 1%.
            </p>
          </>
        ) : distribution.loading ? (
          <Loading what="the distribution" />
        ) : null}
      </div>
    </section>
  );
}

/** Merge two segments into one (a regroup of the stored run). */
function MergeBar({ segments, regroup }: { segments: SegmentProfile[]; regroup: ReturnType<typeof useRegroup> }) {
  const [first, setFirst] = useState('');
  const [second, setSecond] = useState('');
  if (segments.length < 2) return null;
  const known = (key: string) => segments.some((segment) => segment.key === key);
  const ready = known(first) && known(second) && first !== second;
  const choose = (value: string, onChange: (key: string) => void, testId: string, other: string) => (
    <select value={value} onChange={(e) => onChange(e.target.value)} data-testid={testId}>
      <option value="">choose a segment</option>
      {segments.map((segment) => (
        <option key={segment.key} value={segment.key} disabled={segment.key === other}>
          {segment.name}
        </option>
      ))}
    </select>
  );
  return (
    <div className="regroup-bar">
      <span className="regroup-bar-title">Merge two segments</span>
      {choose(first, setFirst, 'merge-first', second)}
      <span>with</span>
      {choose(second, setSecond, 'merge-second', first)}
      <button
        type="button"
        className="button"
        disabled={!ready || regroup.running}
        onClick={() => {
          // By index (unambiguous, and current: the profiles are re-read after every regroup).
          const indexOf = (key: string) => segments.find((segment) => segment.key === key)!.segment;
          regroup.regroup({ merge: [indexOf(first), indexOf(second)] });
          setFirst('');
          setSecond('');
        }}
        data-testid="merge-apply"
      >
        Merge
      </button>
      <span className="hint">
        Changes this stored run in place; memberships, flags, the review queue and movement are recomputed. A segment made of several components can be
        split again on its card.
      </span>
    </div>
  );
}

/** A trait list, most distinctive first. */
function Traits({ segment, format }: { segment: SegmentProfile; format: Formatters }) {
  if (!segment.traits.length) return null;
  return (
    <ul className="card-traits" data-testid={`segment-traits-${segment.spendRank}`}>
      {segment.traits.map((trait) => (
        <li key={trait.feature}>{traitText(trait, format)}</li>
      ))}
    </ul>
  );
}

function SegmentCard({ runId, segment, regroup }: { runId: number; segment: SegmentProfile; regroup: ReturnType<typeof useRegroup> }) {
  const api = useApi();
  const format = useFormat();
  const { refreshSegments, featureLabel } = useWorkspace();
  const [editing, setEditing] = useState(false);
  const [draft, setDraft] = useState(segment.name);
  const [saving, setSaving] = useState(false);
  const [problem, setProblem] = useState<string | null>(null);
  const rank = segment.spendRank;

  const save = () => {
    const name = draft.trim();
    if (!name) {
      setProblem('A segment needs a name.');
      return;
    }
    if (name === segment.name) {
      setEditing(false);
      return;
    }
    setSaving(true);
    api.renameSegment({ runId, segment: segment.segment, name }).then(
      () => {
        setSaving(false);
        setEditing(false);
        setProblem(null);
        refreshSegments();
      },
      (error: unknown) => {
        setSaving(false);
        setProblem(toApiError(error).message);
      },
    );
  };

  return (
    <article className="card" data-testid={`segment-card-${rank}`} style={{ borderTopColor: colourOf(segment) }}>
      <header className="card-head">
        <span className="swatch swatch-large" style={{ background: colourOf(segment) }} aria-hidden="true" />
        {editing ? (
          <form
            className="rename"
            onSubmit={(event) => {
              event.preventDefault();
              save();
            }}
          >
            <input
              autoFocus
              value={draft}
              maxLength={80}
              aria-label="Segment name"
              onChange={(e) => setDraft(e.target.value)}
              onKeyDown={(e) => {
                if (e.key === 'Escape') {
                  setEditing(false);
                  setDraft(segment.name);
                  setProblem(null);
                }
              }}
              data-testid="segment-rename-input"
            />
            <button type="submit" className="button" disabled={saving} data-testid="segment-rename-save">
              Save
            </button>
            <button type="button" className="button-quiet" onClick={() => { setEditing(false); setDraft(segment.name); setProblem(null); }} data-testid="segment-rename-cancel">
              Cancel
            </button>
          </form>
        ) : (
          <>
            <div className="card-title">
              <h3 data-testid={`segment-name-${rank}`}>{segment.name}</h3>
              {segment.renamed ? (
                <span className="card-default-name" data-testid={`segment-default-name-${rank}`}>
                  default name: {segment.defaultName}
                </span>
              ) : null}
            </div>
            <button type="button" className="button-quiet" onClick={() => { setDraft(segment.name); setEditing(true); }} data-testid={`segment-rename-${rank}`} aria-label={`Rename ${segment.name}`}>
              Rename
            </button>
          </>
        )}
      </header>
      {problem ? <p className="field-error" role="alert">{problem}</p> : null}
      <Traits segment={segment} format={format} />
      <p className="card-components" data-testid={`segment-components-${rank}`}>
        {segment.components.length === 1 ? 'component ' : 'components '}
        {segment.components.map((component) => `C${component + 1}`).join(', ')}
        {segment.components.length > 1 ? (
          <button
            type="button"
            className="button-quiet"
            disabled={regroup.running}
            onClick={() => regroup.regroup({ split: { segment: segment.segment, parts: segment.components.map((component) => [component]) } })}
            data-testid={`segment-split-${rank}`}
            title="Make one segment of each of its components"
          >
            Split into {segment.components.length}
          </button>
        ) : null}
      </p>
      <dl className="card-figures">
        <div>
          <dt>customers</dt>
          <dd>{format.count(segment.customers)}</dd>
        </div>
        <div>
          <dt>share of customers</dt>
          <dd>{format.percent(segment.share)}</dd>
        </div>
        <div>
          <dt>share of revenue</dt>
          <dd>{format.percent(segment.revenueShare)}</dd>
        </div>
      </dl>
      <table className="card-profile">
        <caption>Median, and the middle half of customers below it</caption>
        <tbody>
          {segment.profile.map((entry) => (
            <tr key={entry.feature}>
              <th scope="row">{featureLabel(entry.feature)}</th>
              <td>
                {formatInUnit(entry.median, entry.unit, format)}
                <span className="range">
                  {formatInUnit(entry.q1, entry.unit, format)} – {formatInUnit(entry.q3, entry.unit, format)}
                </span>
              </td>
            </tr>
          ))}
        </tbody>
      </table>
    </article>
  );
}
