import type { EChartsCoreOption } from 'echarts/core';
import type { RunSegmentation } from '../../../src/api/contract.js';
import { entropyCurve, layoutCombiningTree, segmentHolding, type TreeNode } from '../lib/combining-tree.js';
import type { Formatters } from '../lib/format.js';
import { ui } from '../lib/palette.js';
import { baseOption, escapeHtml, valueAxis } from './theme.js';

/** How the tree and the curve find a segment's colour, symbol and name (by segment index). */
export interface SegmentLook {
  colour: (segment: number) => string;
  symbol: (segment: number) => string;
  name: (segment: number) => string;
}

const componentLabel = (component: number) => `C${component + 1}`;

/**
 * The combining tree as a dendrogram: components along the bottom, each join drawn at the entropy
 * of the level its merge made (the axis runs downwards, so the tree grows up from its leaves as
 * entropy falls). Joins inside one of the current segments wear its colour; joins across segments
 * are grey; with a level in use, a dashed line cuts the tree where it stops.
 */
export function combiningTreeOption(segmentation: RunSegmentation, look: SegmentLook, format: Formatters): EChartsCoreOption {
  const { leafOrder, joins } = layoutCombiningTree(segmentation.levels);
  const colourOf = (node: TreeNode) => {
    const segment = segmentHolding(node.components, segmentation.segments);
    return segment === null ? ui.inkSoft : look.colour(segment);
  };
  const elbows: Record<string, unknown>[] = joins.map((join) => {
    const [left, right] = join.children!;
    return {
      type: 'line',
      data: [
        [left.x, left.y],
        [left.x, join.y],
        [right.x, join.y],
        [right.x, right.y],
      ],
      showSymbol: false,
      silent: true,
      lineStyle: { color: colourOf(join), width: segmentHolding(join.components, segmentation.segments) === null ? 1.5 : 3 },
      tooltip: { show: false },
      z: 2,
    };
  });
  const leafEntropy = segmentation.levels[0].entropy;
  const segmentOfComponent = new Map(segmentation.segments.flatMap((segment) => segment.components.map((component) => [component, segment.segment] as const)));
  const leaves = {
    type: 'scatter',
    data: leafOrder.map((component, x) => {
      const segment = segmentOfComponent.get(component) ?? 0;
      return { value: [x, leafEntropy], component, segment, symbol: look.symbol(segment), itemStyle: { color: look.colour(segment), borderColor: ui.panel, borderWidth: 1 } };
    }),
    // The component names sit under the leaves (the axis's ticks fall between slots).
    label: { show: true, position: 'bottom', distance: 8, color: ui.ink, fontSize: 12, formatter: (params: { data: { component: number } }) => componentLabel(params.data.component) },
    symbolSize: 13,
    z: 3,
  };
  const joinPoints = {
    type: 'scatter',
    data: joins.map((join) => ({ value: [join.x, join.y], join, itemStyle: { color: colourOf(join) } })),
    symbolSize: 7,
    z: 3,
  };
  const series: Record<string, unknown>[] = [...elbows, leaves, joinPoints];
  const count = segmentation.segmentCount;
  const nextMerge = segmentation.levels.find((level) => level.segmentCount === count - 1);
  const atCount = segmentation.levels.find((level) => level.segmentCount === count);
  if (segmentation.currentLevel !== null && atCount) {
    const cut = nextMerge ? (atCount.entropy + nextMerge.entropy) / 2 : atCount.entropy;
    series.push({
      type: 'line',
      data: [],
      silent: true,
      markLine: {
        silent: true,
        symbol: 'none',
        lineStyle: { color: ui.ink, type: 'dashed', width: 1.5 },
        label: { formatter: `${count} segment${count === 1 ? '' : 's'}`, position: 'insideEndTop', color: ui.ink },
        data: [{ yAxis: cut }],
      },
    });
  }
  return {
    ...baseOption,
    grid: { left: 80, right: 24, top: 28, bottom: 44 },
    tooltip: {
      ...(baseOption.tooltip as object),
      trigger: 'item',
      formatter: (params: { data: { component?: number; segment?: number; join?: TreeNode } }) => {
        if (params.data.component !== undefined) {
          return `component ${params.data.component + 1}, in ${escapeHtml(look.name(params.data.segment ?? 0))}`;
        }
        const join = params.data.join;
        if (!join) return '';
        return `${join.components.map(componentLabel).join(' + ')} combined: ${join.segmentCount} segment${join.segmentCount === 1 ? '' : 's'}, entropy ${format.decimal(join.y, 1)}`;
      },
    },
    xAxis: valueAxis('components', {
      min: -0.5,
      max: Math.max(0.5, leafOrder.length - 0.5),
      interval: 1,
      scale: false,
      splitLine: { show: false },
      axisLabel: { show: false },
      axisTick: { show: false },
      nameGap: 30,
    }),
    yAxis: valueAxis('entropy (falls as components combine)', { inverse: true, scale: false, min: 0, nameGap: 60, axisLabel: { color: ui.inkSoft, formatter: (v: number) => format.count(v) } }),
    series,
  };
}

/**
 * Entropy of each level against the number of segments (or the cumulative count of customers
 * merged, the normalised curve); the level auto picks is ringed and the level in use
 * filled large. A click on a point picks that level (the screen listens).
 */
export function entropyCurveOption(segmentation: RunSegmentation, against: 'segments' | 'merged', format: Formatters): EChartsCoreOption {
  const auto = against === 'segments' ? segmentation.autoSegmentCount : segmentation.autoSegmentCountByMergedRows;
  const points = entropyCurve(segmentation.levels, against);
  const current = segmentation.currentLevel;
  return {
    ...baseOption,
    grid: { left: 80, right: 24, top: 28, bottom: 52 },
    tooltip: {
      ...(baseOption.tooltip as object),
      trigger: 'item',
      formatter: (params: { data: { segmentCount: number; value: [number, number] } }) =>
        `${params.data.segmentCount} segment${params.data.segmentCount === 1 ? '' : 's'}: entropy ${format.decimal(params.data.value[1], 1)}` +
        (against === 'merged' ? `, ${format.count(params.data.value[0])} customers merged` : '') +
        (params.data.segmentCount === auto ? '<br>where the curve flattens (automatic choice)' : '') +
        (params.data.segmentCount === current ? '<br>in use' : '') +
        '<br>click to choose this level',
    },
    xAxis: valueAxis(against === 'segments' ? 'number of segments' : 'customers merged, counted from one segment up', {
      scale: false,
      ...(against === 'segments' ? { min: 1, max: segmentation.components, interval: 1, minInterval: 1 } : { axisLabel: { color: ui.inkSoft, formatter: (v: number) => format.count(v) } }),
    }),
    yAxis: valueAxis('entropy', { scale: false, min: 0, nameGap: 60, axisLabel: { color: ui.inkSoft, formatter: (v: number) => format.count(v) } }),
    series: [
      {
        type: 'line',
        data: points.map((point) => ({
          value: [point.x, point.entropy],
          segmentCount: point.segmentCount,
          symbolSize: point.segmentCount === current ? 16 : point.segmentCount === auto ? 14 : 9,
          itemStyle:
            point.segmentCount === current
              ? { color: ui.accent, borderColor: ui.panel, borderWidth: 2 }
              : point.segmentCount === auto
                ? { color: ui.panel, borderColor: ui.accent, borderWidth: 3 }
                : { color: ui.accent },
          label: { show: true, position: 'top', color: ui.inkSoft, fontSize: 11, formatter: String(point.segmentCount) },
        })),
        symbol: 'circle',
        lineStyle: { color: ui.accent, width: 2 },
        cursor: 'pointer',
      },
    ],
  };
}
