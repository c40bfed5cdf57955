import type { EChartsCoreOption } from 'echarts/core';
import { ui } from '../lib/palette.js';

/** Options every Spendmix chart shares: our type, our greys, no animation (paint is measured). */
export const baseOption: EChartsCoreOption = {
  animation: false,
  textStyle: { fontFamily: 'inherit', color: ui.ink, fontSize: 13 },
  grid: { left: 64, right: 24, top: 36, bottom: 48, containLabel: false },
  tooltip: { confine: true, backgroundColor: ui.panel, borderColor: ui.rule, textStyle: { color: ui.ink } },
};

export function valueAxis(name: string, extra: Record<string, unknown> = {}): Record<string, unknown> {
  return {
    type: 'value',
    name,
    nameLocation: 'middle',
    nameGap: 36,
    scale: true,
    axisLine: { lineStyle: { color: ui.rule } },
    axisLabel: { color: ui.inkSoft, fontSize: 12 },
    nameTextStyle: { color: ui.inkSoft, fontSize: 13 },
    splitLine: { lineStyle: { color: ui.gridLine } },
    ...extra,
  };
}

export function categoryAxis(name: string, data: (string | number)[], extra: Record<string, unknown> = {}): Record<string, unknown> {
  return {
    type: 'category',
    name,
    nameLocation: 'middle',
    nameGap: 32,
    data,
    axisLine: { lineStyle: { color: ui.rule } },
    axisLabel: { color: ui.inkSoft, fontSize: 12 },
    nameTextStyle: { color: ui.inkSoft, fontSize: 13 },
    ...extra,
  };
}

/**
 * Text for a tooltip formatter's HTML: ECharts writes what a formatter returns as markup, and
 * segment names and reasons are the analyst's or the core's words, never markup.
 */
export function escapeHtml(text: string): string {
  return text.replace(/[&<>"']/g, (character) => `&#${character.charCodeAt(0)};`);
}
