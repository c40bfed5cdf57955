import type { EChartsCoreOption } from 'echarts/core';
import type { ComponentShape, FeatureDistribution, SegmentProfile, SegmentSample } from '../../../src/api/contract.js';
import { covarianceEllipse, ellipsePoints } from '../lib/ellipse.js';
import type { Formatters } from '../lib/format.js';
import { segmentColour, segmentSymbol, ui } from '../lib/palette.js';
import { baseOption, valueAxis } from './theme.js';

/** Which colour a segment wears everywhere: its position in spend order (Tier 1 = first colour). */
export function colourOf(segment: Pick<SegmentProfile, 'spendRank'>): string {
  return segmentColour(segment.spendRank - 1);
}

export function symbolOf(segment: Pick<SegmentProfile, 'spendRank'>): string {
  return segmentSymbol(segment.spendRank - 1);
}

/**
 * Scatter of two model features over the core's sample, one series per segment, with each
 * Gaussian component's 1 and 2 SD density ellipses (model space, where each component is
 * Gaussian) in the colour of the segment it belongs to: a segment made of several components
 * shows several rings, which is its real shape; one moment-matched ring would hide it.
 */
export function scatterOption(
  segments: SegmentProfile[],
  components: ComponentShape[],
  sample: SegmentSample,
  xIndex: number,
  yIndex: number,
  axisNames: { x: string; y: string },
): EChartsCoreOption {
  const d = sample.features.length;
  if (xIndex < 0 || xIndex >= d || yIndex < 0 || yIndex >= d) {
    throw new RangeError(`Feature indexes ${xIndex}, ${yIndex} are outside the model's ${d} features.`);
  }
  const bySegment = new Map<number, [number, number][]>();
  for (const point of sample.points) {
    let list = bySegment.get(point.segment);
    if (!list) bySegment.set(point.segment, (list = []));
    list.push([point.model[xIndex], point.model[yIndex]]);
  }
  const ordered = [...segments].sort((a, b) => a.spendRank - b.spendRank);
  const series: Record<string, unknown>[] = [];
  for (const segment of ordered) {
    const colour = colourOf(segment);
    series.push({
      type: 'scatter',
      name: segment.name,
      data: bySegment.get(segment.segment) ?? [],
      symbol: symbolOf(segment),
      symbolSize: 5,
      itemStyle: { color: colour, opacity: 0.55 },
      large: true,
      largeThreshold: 4000,
      emphasis: { disabled: true },
    });
    for (const component of components.filter((shape) => shape.segment === segment.segment)) {
      const xx = component.covariance[xIndex * d + xIndex];
      const yy = component.covariance[yIndex * d + yIndex];
      const xy = component.covariance[xIndex * d + yIndex];
      for (const radius of [1, 2]) {
        series.push({
          type: 'line',
          name: segment.name,
          data: ellipsePoints(component.mean[xIndex], component.mean[yIndex], covarianceEllipse(xx, xy, yy, radius)),
          showSymbol: false,
          silent: true,
          lineStyle: { color: colour, width: radius === 1 ? 2 : 1.25, type: radius === 1 ? 'solid' : 'dashed' },
          z: 5,
          tooltip: { show: false },
        });
      }
    }
  }
  const unplaced = components.filter((shape) => !segments.some((segment) => segment.segment === shape.segment));
  if (unplaced.length) throw new RangeError(`Components ${unplaced.map((shape) => shape.component).join(', ')} belong to no segment of the run.`);
  return {
    ...baseOption,
    grid: { left: 64, right: 24, top: 48, bottom: 52 },
    legend: { top: 4, left: 'center', icon: 'circle', textStyle: { color: ui.ink } },
    tooltip: { ...(baseOption.tooltip as object), trigger: 'item' },
    xAxis: valueAxis(axisNames.x),
    yAxis: valueAxis(axisNames.y, { nameGap: 44 }),
    series,
  };
}

/**
 * Distribution of one feature per segment over all placed customers (the core bins it), drawn
 * as each segment's share of its own customers per bin so small segments stay visible.
 */
export function distributionOption(
  segments: SegmentProfile[],
  distribution: FeatureDistribution,
  axisName: string,
  format: Formatters,
): EChartsCoreOption {
  const centres = distribution.edges.slice(0, -1).map((edge, i) => (edge + distribution.edges[i + 1]) / 2);
  const bySegment = new Map(distribution.counts.map((entry) => [entry.segment, entry.counts]));
  const ordered = [...segments].sort((a, b) => a.spendRank - b.spendRank);
  return {
    ...baseOption,
    grid: { left: 64, right: 24, top: 40, bottom: 52 },
    legend: { top: 4, left: 'center', icon: 'roundRect', textStyle: { color: ui.ink } },
    tooltip: {
      ...(baseOption.tooltip as object),
      trigger: 'axis',
      valueFormatter: (value: unknown) => (typeof value === 'number' ? format.percent(value) : String(value)),
    },
    xAxis: valueAxis(axisName),
    yAxis: valueAxis('share of the segment', { axisLabel: { formatter: (v: number) => format.percent(v, 0) }, scale: false, nameGap: 48 }),
    series: ordered.map((segment) => {
      const counts = bySegment.get(segment.segment) ?? [];
      const total = counts.reduce((sum, count) => sum + count, 0);
      return {
        type: 'line',
        name: segment.name,
        step: 'middle',
        showSymbol: false,
        data: centres.map((centre, i) => [centre, total > 0 ? (counts[i] ?? 0) / total : 0]),
        lineStyle: { color: colourOf(segment), width: 2 },
        itemStyle: { color: colourOf(segment) },
        areaStyle: { color: colourOf(segment), opacity: 0.08 },
      };
    }),
  };
}
