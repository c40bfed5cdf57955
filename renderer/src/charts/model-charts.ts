import type { EChartsCoreOption } from 'echarts/core';
import type { CovarianceType, SweepRow } from '../../../src/api/contract.js';
import type { Formatters } from '../lib/format.js';
import { ui } from '../lib/palette.js';
import { baseOption, valueAxis } from './theme.js';

/** Structures get their own line style (not segment colours: these are not segments). */
const structureStyle: Record<CovarianceType, { colour: string; dash: 'solid' | 'dashed' | 'dotted'; symbol: string }> = {
  full: { colour: '#1f4f66', dash: 'solid', symbol: 'circle' },
  diag: { colour: '#8a5a1c', dash: 'dashed', symbol: 'rect' },
  spherical: { colour: '#6d6a9c', dash: 'dotted', symbol: 'triangle' },
  tied: { colour: '#4f7a52', dash: 'solid', symbol: 'diamond' },
};

export const structureLabels: Record<CovarianceType, string> = {
  full: 'full',
  diag: 'diagonal',
  spherical: 'spherical',
  tied: 'tied (shared)',
};

/** The information criterion over k, one line per covariance structure; the chosen fit ringed. */
export function criterionOption(rows: SweepRow[], criterion: 'bic' | 'icl', format: Formatters): EChartsCoreOption {
  const structures = [...new Set(rows.map((row) => row.covariance))];
  const series: Record<string, unknown>[] = structures.map((structure) => {
    const style = structureStyle[structure];
    const points = rows
      .filter((row) => row.covariance === structure)
      .sort((a, b) => a.k - b.k)
      .map((row) => ({
        value: [row.k, row[criterion]],
        symbolSize: row.chosen ? 16 : 7,
        itemStyle: row.chosen ? { color: ui.panel, borderColor: style.colour, borderWidth: 3 } : { color: style.colour },
      }));
    return {
      type: 'line',
      name: structureLabels[structure],
      data: points,
      symbol: style.symbol,
      lineStyle: { color: style.colour, type: style.dash, width: 2 },
      itemStyle: { color: style.colour },
    };
  });
  return {
    ...baseOption,
    grid: { left: 88, right: 24, top: 40, bottom: 52 },
    legend: { top: 4, left: 'center' },
    tooltip: {
      ...(baseOption.tooltip as object),
      trigger: 'item',
      formatter: (params: { seriesName: string; value: [number, number] }) =>
        `${params.seriesName}, k = ${params.value[0]}: ${criterion.toUpperCase()} ${format.decimal(params.value[1], 1)}`,
    },
    xAxis: valueAxis('number of segments k', { minInterval: 1, scale: false, min: 'dataMin', max: 'dataMax' }),
    yAxis: valueAxis(`${criterion.toUpperCase()} (lower is better)`, {
      nameGap: 70,
      axisLabel: { color: ui.inkSoft, formatter: (v: number) => format.count(v) },
    }),
    series,
  };
}

/** The best row per criterion, for the caption under the chart. */
export function bestRow(rows: SweepRow[], criterion: 'bic' | 'icl'): SweepRow | null {
  let best: SweepRow | null = null;
  for (const row of rows) if (Number.isFinite(row[criterion]) && (!best || row[criterion] < best[criterion])) best = row;
  return best;
}
