import type { EChartsCoreOption } from 'echarts/core';
import type { CertaintySummary } from '../../../src/api/contract.js';
import type { Formatters } from '../lib/format.js';
import { ui } from '../lib/palette.js';
import { baseOption, categoryAxis, valueAxis } from './theme.js';

/** Histogram of confidence (highest posterior) with the borderline cut marked. */
export function confidenceOption(summary: CertaintySummary, borderlineConfidence: number, format: Formatters): EChartsCoreOption {
  const labels = summary.confidenceHistogram.map((bin) => format.decimal(bin.from, 2));
  return {
    ...baseOption,
    grid: { left: 72, right: 24, top: 24, bottom: 52 },
    tooltip: {
      ...(baseOption.tooltip as object),
      trigger: 'axis',
      formatter: (params: { dataIndex: number }[]) => {
        const bin = summary.confidenceHistogram[params[0].dataIndex];
        return `confidence ${format.decimal(bin.from, 2)}–${format.decimal(bin.to, 2)}: ${format.count(bin.customers)} customers`;
      },
    },
    xAxis: categoryAxis('confidence (highest posterior probability)', labels),
    yAxis: valueAxis('customers', { scale: false, nameGap: 56, axisLabel: { color: ui.inkSoft, formatter: (v: number) => format.count(v) } }),
    series: [
      {
        type: 'bar',
        barCategoryGap: '8%',
        // Counts on the bars: one full bar can dwarf the rest, and small bars must stay readable.
        label: {
          show: true,
          position: 'top',
          color: ui.inkSoft,
          fontSize: 11,
          formatter: (params: { value: number }) => (params.value > 0 ? format.count(params.value) : ''),
        },
        data: summary.confidenceHistogram.map((bin) => ({
          value: bin.customers,
          itemStyle: { color: bin.to <= borderlineConfidence + 1e-9 ? ui.warn : ui.accent },
        })),
      },
    ],
  };
}
