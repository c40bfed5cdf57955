import type { EChartsCoreOption } from 'echarts/core';
import type { MovementResult } from '../../../src/api/contract.js';
import type { Formatters } from '../lib/format.js';
import { ui } from '../lib/palette.js';
import { baseOption, categoryAxis, escapeHtml } from './theme.js';

/** Parent × current counts as a single-hue heatmap (reads the same in any colour vision). */
export function heatmapOption(movement: MovementResult, format: Formatters): EChartsCoreOption {
  const largest = Math.max(1, ...movement.matrix.flat());
  // Dark cells get light text: the ramp runs from paper to deep blue, so the label flips half way.
  const data = movement.matrix.flatMap((row, i) =>
    row.map((count, j) => ({
      value: [j, i, count] as [number, number, number],
      label: { color: count / largest > 0.45 ? ui.panel : ui.ink },
    })),
  );
  return {
    ...baseOption,
    grid: { left: 180, right: 24, top: 24, bottom: 96 },
    tooltip: {
      ...(baseOption.tooltip as object),
      formatter: (params: { value: [number, number, number] }) => {
        const [j, i, count] = params.value;
        return `${escapeHtml(movement.parentSegments[i].name)} → ${escapeHtml(movement.currentSegments[j].name)}: ${format.count(count)} customers`;
      },
    },
    xAxis: categoryAxis('this run', movement.currentSegments.map((s) => s.name), { nameGap: 72, axisLabel: { interval: 0, rotate: 20, color: ui.inkSoft } }),
    yAxis: categoryAxis('previous run', movement.parentSegments.map((s) => s.name), { nameGap: 160, inverse: true }),
    visualMap: { show: false, min: 0, max: largest, inRange: { color: [ui.rampLow, ui.rampHigh] } },
    series: [
      {
        type: 'heatmap',
        data,
        label: {
          show: true,
          formatter: (params: { value: [number, number, number] }) => format.count(params.value[2]),
          fontSize: 12,
        },
        itemStyle: { borderColor: ui.panel, borderWidth: 2 },
      },
    ],
  };
}

/** Width of this run's labels in the flow chart's right margin, px. */
const FLOW_LABEL_WIDTH = 150;

/**
 * Flow from last run's segments to this run's over the customers in both. Entered and left are
 * totals without a split by segment in the movement result, so the screen states them beside
 * the chart rather than inventing flows. Node names carry a side prefix because a sankey needs
 * unique names and matched segments keep theirs.
 */
export function flowOption(movement: MovementResult, colourForNode: (node: string) => string, format: Formatters): EChartsCoreOption {
  const before = (name: string) => `before: ${name}`;
  const after = (name: string) => `now: ${name}`;
  const nodes: Record<string, unknown>[] = [
    ...movement.parentSegments.map((s) => ({ name: before(s.name), itemStyle: { color: colourForNode(before(s.name)) } })),
    // This run's labels sit in the right margin, cut with an ellipsis at its width (the tooltip has the whole name): names of four traits are wider.
    ...movement.currentSegments.map((s) => ({
      name: after(s.name),
      itemStyle: { color: colourForNode(after(s.name)) },
      label: { width: FLOW_LABEL_WIDTH, overflow: 'truncate', ellipsis: '…' },
    })),
  ];
  const links: { source: string; target: string; value: number }[] = [];
  movement.matrix.forEach((row, i) =>
    row.forEach((count, j) => {
      if (count > 0) links.push({ source: before(movement.parentSegments[i].name), target: after(movement.currentSegments[j].name), value: count });
    }),
  );
  return {
    ...baseOption,
    tooltip: {
      ...(baseOption.tooltip as object),
      trigger: 'item',
      formatter: (params: { dataType: string; data: { source?: string; target?: string; value?: number; name?: string }; value: number }) =>
        params.dataType === 'edge'
          ? `${escapeHtml(params.data.source ?? '')} → ${escapeHtml(params.data.target ?? '')}: ${format.count(params.value)} customers`
          : escapeHtml(params.data.name ?? ''),
    },
    series: [
      {
        type: 'sankey',
        left: 8,
        right: FLOW_LABEL_WIDTH + 12,
        top: 12,
        bottom: 12,
        nodeGap: 10,
        nodeAlign: 'justify',
        draggable: false,
        data: nodes,
        links,
        lineStyle: { color: 'source', opacity: 0.35, curveness: 0.5 },
        label: { color: ui.ink, fontSize: 12, formatter: (params: { name: string }) => params.name.replace(/^(before|now): /, '') },
        emphasis: { focus: 'adjacency' },
      },
    ],
  };
}
