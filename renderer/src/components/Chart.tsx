import { useEffect, useRef } from 'react';
import type { EChartsCoreOption } from 'echarts/core';
import { echarts } from '../charts/echarts.js';

interface ChartProps {
  option: EChartsCoreOption;
  /** Accessible description of what the chart shows. */
  label: string;
  height?: number;
  testId: string;
  /** Called once the chart has finished drawing this option (ECharts' `finished` event). */
  onPainted?: () => void;
  /** Called with the clicked item's data (a point of a series). */
  onItemClick?: (data: unknown) => void;
}

/** One ECharts instance bound to a div; resized with its box and disposed on unmount. */
export function Chart({ option, label, height = 320, testId, onPainted, onItemClick }: ChartProps) {
  const box = useRef<HTMLDivElement>(null);
  const instance = useRef<ReturnType<typeof echarts.init> | null>(null);
  const painted = useRef(onPainted);
  painted.current = onPainted;
  const clicked = useRef(onItemClick);
  clicked.current = onItemClick;

  useEffect(() => {
    const element = box.current;
    if (!element) return;
    const chart = echarts.init(element, undefined, { renderer: 'canvas' });
    instance.current = chart;
    const observer = new ResizeObserver(() => chart.resize());
    observer.observe(element);
    chart.on('click', (params: { data?: unknown }) => clicked.current?.(params.data));
    return () => {
      observer.disconnect();
      chart.dispose();
      instance.current = null;
    };
  }, []);

  useEffect(() => {
    const chart = instance.current;
    if (!chart) return;
    let reported = false;
    const onFinished = () => {
      if (reported) return;
      reported = true;
      box.current?.setAttribute('data-painted', 'true');
      painted.current?.();
    };
    box.current?.setAttribute('data-painted', 'false');
    chart.on('finished', onFinished);
    chart.setOption(option, { notMerge: true });
    return () => {
      chart.off('finished', onFinished);
    };
  }, [option]);

  return <div ref={box} className="chart" style={{ height }} role="img" aria-label={label} data-testid={testId} />;
}
