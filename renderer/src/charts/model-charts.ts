import type { EChartsCoreOption } from 'echarts/core';
import type { CovarianceType, SweepRow } from '../../../src/api/contract.js';
import type { Formatters } from '../lib/format.js';
import { ui } from '../lib/palette.js';
import { baseOption, escapeHtml, valueAxis } from './theme.js';

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

/** A cross: the marker of a refused fit, readable without colour. */
export const refusedSymbol = 'path://M2,0 L5,3 L8,0 L10,2 L7,5 L10,8 L8,10 L5,7 L2,10 L0,8 L3,5 L0,2 Z';

/** A criterion value as the chart plots it: refused and failed fits can carry no finite value. */
const plotted = (value: number) => (Number.isFinite(value) ? value : null);

/**
 * The information criterion over k, one line per covariance structure; the chosen fit ringed.
 * A refused fit keeps its place on its line as a cross in the warning colour (its value is real,
 * it is only never chosen), and its tooltip gives the reason.
 */
export function criterionOption(rows: SweepRow[], criterion: 'bic' | 'icl', format: Formatters): EChartsCoreOption {
  const structures = [...new Set(rows.map((row) => row.covariance))];
  const series: Record<string, unknown>[] = structures.map((structure) => {
    const style = structureStyle[structure];
    const points = rows
      .filter((row) => row.covariance === structure)
      .sort((a, b) => a.k - b.k)
      .map((row) => ({
        value: [row.k, plotted(row[criterion])],
        refused: row.refused,
        symbol: row.refused ? refusedSymbol : style.symbol,
        symbolSize: row.chosen ? 16 : row.refused ? 11 : 7,
        itemStyle: row.chosen
          ? { color: ui.panel, borderColor: style.colour, borderWidth: 3 }
          : row.refused
            ? { color: ui.warn, borderColor: ui.panel, borderWidth: 1 }
            : { color: style.colour },
      }));
    return {
      type: 'line',
      name: structureLabels[structure],
      data: points,
      symbol: style.symbol,
      connectNulls: false,
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
      formatter: (params: { seriesName: string; value: [number, number | null]; data: { refused: string | null } }) =>
        `${params.seriesName}, k = ${params.value[0]}: ${criterion.toUpperCase()} ${params.value[1] === null ? '—' : format.decimal(params.value[1], 1)}` +
        (params.data.refused ? `<br>refused: ${escapeHtml(params.data.refused)}` : ''),
    },
    xAxis: valueAxis('number of components k', { minInterval: 1, scale: false, min: 'dataMin', max: 'dataMax' }),
    yAxis: valueAxis(`${criterion.toUpperCase()} (lower is better)`, {
      nameGap: 70,
      axisLabel: { color: ui.inkSoft, formatter: (v: number) => format.count(v) },
    }),
    series,
  };
}

/**
 * The best row by the criterion, for the caption under the chart: among the fits that may be
 * chosen, or among all fits with `includeRefused`.
 */
export function bestRow(rows: SweepRow[], criterion: 'bic' | 'icl', { includeRefused = false } = {}): SweepRow | null {
  let best: SweepRow | null = null;
  for (const row of rows) {
    if (row.refused !== null && !includeRefused) continue;
    if (Number.isFinite(row[criterion]) && (!best || row[criterion] < best[criterion])) best = row;
  }
  return best;
}

/** The sweep table's order: best criterion first, fits without a finite value last. */
export function sweepOrder(rows: SweepRow[], criterion: 'bic' | 'icl'): SweepRow[] {
  const value = (row: SweepRow) => (Number.isFinite(row[criterion]) ? row[criterion] : Number.POSITIVE_INFINITY);
  return [...rows].sort((a, b) => value(a) - value(b) || a.k - b.k || a.covariance.localeCompare(b.covariance));
}
