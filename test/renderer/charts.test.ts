import { describe, expect, it } from 'vitest';
import type { ComponentShape, MovementResult, SegmentProfile, SegmentSample, SweepRow } from '../../src/api/contract.js';
import { confidenceOption } from '../../renderer/src/charts/certainty-charts.js';
import { bestRow, criterionOption } from '../../renderer/src/charts/model-charts.js';
import { flowOption, heatmapOption } from '../../renderer/src/charts/movement-charts.js';
import { colourOf, distributionOption, scatterOption } from '../../renderer/src/charts/segment-charts.js';
import { formattersFor } from '../../renderer/src/lib/format.js';
import { segmentColours } from '../../renderer/src/lib/palette.js';

const format = formattersFor('en-GB');

function segment(index: number, spendRank: number, mean: number[], covariance: number[]): SegmentProfile {
  return {
    segment: index, key: `s${index}`, name: `Tier ${spendRank}`, defaultName: `Tier ${spendRank}`, renamed: false, traits: [], spendRank, origin: 'first',
    customers: 10, share: 0.5, revenue: 100, revenueShare: 0.5, profile: [], components: [index], weight: 0.5, mean, covariance,
  };
}

// Two segments in model space; the model's index order differs from spend order on purpose.
const segments = [segment(0, 2, [0, 0], [1, 0.3, 0.3, 2]), segment(1, 1, [3, 1], [0.5, 0, 0, 0.5])];
// One component per segment (each segment's own shape), and a two-component variant below.
const components: ComponentShape[] = segments.map((s) => ({ component: s.segment, segment: s.segment, weight: s.weight, mean: s.mean, covariance: s.covariance }));
const sample: SegmentSample = {
  runId: 1,
  totalCustomers: 1000,
  features: ['a', 'b'],
  points: [
    { customerId: 'x', segment: 0, model: [0.1, 0.2], original: [1, 2] },
    { customerId: 'y', segment: 1, model: [2.9, 1.1], original: [3, 4] },
    { customerId: 'z', segment: 1, model: [3.2, 0.8], original: [3, 4] },
  ],
};

type Series = { type: string; name: string; data: unknown[]; itemStyle?: { color?: string }; lineStyle?: { color?: string; type?: string } };

describe('Segments charts', () => {
  it('colours a segment by its spend rank, the same in every chart', () => {
    expect(colourOf(segments[1])).toBe(segmentColours[0]);
    expect(colourOf(segments[0])).toBe(segmentColours[1]);
    const scatter = scatterOption(segments, components, sample, 0, 1, { x: 'a', y: 'b' }).series as Series[];
    const distribution = distributionOption(
      segments,
      { runId: 1, feature: 'a', unit: 'EUR', edges: [0, 1, 2], counts: [{ segment: 0, counts: [1, 3] }, { segment: 1, counts: [2, 2] }], customersUsed: 8, totalCustomers: 8 },
      'a',
      format,
    ).series as Series[];
    const scatterColour = (name: string) => scatter.find((s) => s.type === 'scatter' && s.name === name)?.itemStyle?.color;
    const distributionColour = (name: string) => distribution.find((s) => s.name === name)?.lineStyle?.color;
    for (const s of segments) {
      expect(scatterColour(s.name)).toBe(colourOf(s));
      expect(distributionColour(s.name)).toBe(colourOf(s));
    }
  });

  it('draws each segment\'s points and its 1 and 2 SD ellipses, Tier 1 first', () => {
    const series = scatterOption(segments, components, sample, 0, 1, { x: 'a', y: 'b' }).series as Series[];
    expect(series.map((s) => `${s.type}:${s.name}`)).toEqual([
      'scatter:Tier 1', 'line:Tier 1', 'line:Tier 1',
      'scatter:Tier 2', 'line:Tier 2', 'line:Tier 2',
    ]);
    expect(series[0].data).toHaveLength(2);
    expect(series[3].data).toHaveLength(1);
    expect(series[1].lineStyle?.type).toBe('solid');
    expect(series[2].lineStyle?.type).toBe('dashed');
    // Tier 1's covariance is 0.5·I: its 1 SD ring has radius √0.5 round (3, 1).
    for (const [x, y] of series[1].data as [number, number][]) expect(Math.hypot(x - 3, y - 1)).toBeCloseTo(Math.sqrt(0.5), 9);
    for (const [x, y] of series[2].data as [number, number][]) expect(Math.hypot(x - 3, y - 1)).toBeCloseTo(2 * Math.sqrt(0.5), 9);
  });

  it('draws one pair of rings per component, in the colour of its segment', () => {
    const split: ComponentShape[] = [
      { component: 0, segment: 0, weight: 0.25, mean: [-1, 0], covariance: [1, 0, 0, 1] },
      { component: 1, segment: 1, weight: 0.5, mean: [3, 1], covariance: [0.5, 0, 0, 0.5] },
      { component: 2, segment: 0, weight: 0.25, mean: [1, 0], covariance: [0.25, 0, 0, 0.25] },
    ];
    const series = scatterOption(segments, split, sample, 0, 1, { x: 'a', y: 'b' }).series as Series[];
    const rings = series.filter((s) => s.type === 'line');
    expect(rings.map((s) => s.name)).toEqual(['Tier 1', 'Tier 1', 'Tier 2', 'Tier 2', 'Tier 2', 'Tier 2']);
    for (const ring of rings) expect(ring.lineStyle?.color).toBe(colourOf(segments.find((s) => s.name === ring.name)!));
    // Tier 2's second component: radius √0.25 = 0.5 round (1, 0) at 1 SD.
    for (const [x, y] of rings[4].data as [number, number][]) expect(Math.hypot(x - 1, y)).toBeCloseTo(0.5, 9);
    expect(() => scatterOption(segments, [...split, { ...split[0], component: 3, segment: 7 }], sample, 0, 1, { x: 'a', y: 'b' })).toThrow(/belong to no segment/);
  });

  it('refuses feature indexes outside the model', () => {
    expect(() => scatterOption(segments, components, sample, 0, 2, { x: 'a', y: 'c' })).toThrow(RangeError);
  });

  it('shows each distribution as a share of its own segment', () => {
    const series = distributionOption(
      segments,
      { runId: 1, feature: 'a', unit: 'EUR', edges: [0, 1, 2], counts: [{ segment: 0, counts: [1, 3] }, { segment: 1, counts: [0, 0] }], customersUsed: 4, totalCustomers: 4 },
      'a',
      format,
    ).series as Series[];
    expect(series.find((s) => s.name === 'Tier 2')?.data).toEqual([[0.5, 0.25], [1.5, 0.75]]);
    expect(series.find((s) => s.name === 'Tier 1')?.data).toEqual([[0.5, 0], [1.5, 0]]);
  });
});

describe('Model, Certainty and Movement charts', () => {
  const row = (k: number, covariance: SweepRow['covariance'], bic: number, chosen = false): SweepRow => ({
    k, covariance, logLikelihood: -bic / 2, bic, aic: bic, icl: bic + 10, parameterCount: k, converged: true, iterations: 5, warnings: [], refused: null, chosen,
  });

  it('draws one criterion line per structure over k and rings the chosen fit', () => {
    const rows = [row(3, 'full', 90), row(2, 'full', 100, true), row(2, 'diag', 95), row(3, 'diag', 80)];
    const series = criterionOption(rows, 'bic', format).series as { name: string; data: { value: [number, number]; symbolSize: number }[] }[];
    expect(series.map((s) => s.name)).toEqual(['full', 'diagonal']);
    expect(series[0].data.map((d) => d.value)).toEqual([[2, 100], [3, 90]]);
    expect(series[0].data[0].symbolSize).toBeGreaterThan(series[0].data[1].symbolSize);
    expect(bestRow(rows, 'bic')).toMatchObject({ k: 3, covariance: 'diag' });
    expect(bestRow(rows, 'icl')).toMatchObject({ k: 3, covariance: 'diag' });
    expect(bestRow([], 'bic')).toBeNull();
  });

  it('marks histogram bars at or below the borderline confidence', () => {
    const option = confidenceOption(
      {
        runId: 1, customers: 30, borderline: 10, atypical: 0, atypicalLogDensityBelow: -3,
        confidenceHistogram: [{ from: 0.5, to: 0.75, customers: 10 }, { from: 0.75, to: 1, customers: 20 }],
        queue: { capacity: 200, flagged: 10, queued: 10, leftOut: { customers: 0, borderline: 0, atypical: 0, mover: 0 }, leftOutDecided: 0, valueCut: null },
      },
      0.75,
      format,
    );
    const bars = (option.series as { data: { value: number; itemStyle: { color: string } }[] }[])[0].data;
    expect(bars.map((bar) => bar.value)).toEqual([10, 20]);
    expect(bars[0].itemStyle.color).not.toBe(bars[1].itemStyle.color);
  });

  const movement: MovementResult = {
    runId: 2, parentRunId: 1,
    parentSegments: [{ segment: 0, key: 'S1', name: 'Tier 1' }, { segment: 1, key: 'S2', name: 'Tier 2' }],
    currentSegments: [{ segment: 0, key: 'S1', name: 'Tier 1' }, { segment: 1, key: 'S2', name: 'Tier 2' }],
    matrix: [[5, 1], [0, 7]], common: 13, entered: 2, left: 1, stability: 0.6, warnings: [], retired: [], added: [],
  };

  it('puts every matrix cell in the heatmap, current across and previous down', () => {
    const data = (heatmapOption(movement, format).series as { data: { value: [number, number, number] }[] }[])[0].data.map((cell) => cell.value);
    expect(data).toEqual([[0, 0, 5], [1, 0, 1], [0, 1, 0], [1, 1, 7]]);
  });

  it('links only non-empty cells in the flow, summing to the common customers', () => {
    const series = (flowOption(movement, () => '#000000', format).series as { data: { name: string }[]; links: { source: string; target: string; value: number }[] }[])[0];
    expect(series.links).toEqual([
      { source: 'before: Tier 1', target: 'now: Tier 1', value: 5 },
      { source: 'before: Tier 1', target: 'now: Tier 2', value: 1 },
      { source: 'before: Tier 2', target: 'now: Tier 2', value: 7 },
    ]);
    expect(series.links.reduce((sum, link) => sum + link.value, 0)).toBe(movement.common);
    expect(new Set(series.data.map((node) => node.name)).size).toBe(4);
  });

  it('fits this run\'s labels in the right margin, cut with an ellipsis, so long names do not run off the chart', () => {
    const series = (flowOption(movement, () => '#000000', format).series as { right: number; data: { name: string; label?: { width: number; overflow: string } }[] }[])[0];
    const labels = series.data.filter((node) => node.name.startsWith('now: ')).map((node) => node.label!);
    expect(labels).toHaveLength(2);
    for (const label of labels) {
      expect(label.overflow).toBe('truncate');
      expect(label.width).toBeLessThan(series.right);
    }
  });
});
