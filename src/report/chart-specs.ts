// Vega-Lite specifications of every chart in the reports. Data arrive inline and already
// bounded; nothing refers to a URL, so the rendered SVG needs nothing from the network.

import type { TopLevelSpec } from 'vega-lite';
import type { BytesRow, CurvePointRow, HistogramBar, TimelineSegment } from './run-series.js';

const chartWidth = 560;
const chartHeight = 260;

const baseConfig = {
  background: 'white',
  font: 'sans-serif',
  view: { stroke: '#ccc' },
  axis: { labelFontSize: 11, titleFontSize: 12 },
  legend: { labelFontSize: 11, labelLimit: 400 },
};

export type CurveAxis = 'round' | 'payloadBytes' | 'seconds';

export const curveAxisTitles: Record<CurveAxis, string> = {
  round: 'round',
  payloadBytes: 'cumulative payload bytes (up and down)',
  seconds: 'seconds',
};

export interface CurveChartOptions {
  axis: CurveAxis;
  /** overrides the axis title, e.g. to say which clock the seconds come from */
  axisTitle?: string;
  /** series in legend order */
  series: string[];
  /** series drawn dashed (predictions) */
  dashed?: string[];
  /** the y range, when some series (a prediction) should not stretch it */
  yDomain?: [number, number];
}

/** Suboptimality on a log scale against rounds, cumulative bytes or seconds, one line a series. */
export function curveChartSpec(rows: readonly CurvePointRow[], options: CurveChartOptions): TopLevelSpec {
  const dashed = new Set(options.dashed ?? []);
  const legend = { orient: 'bottom', columns: 2, title: null, symbolType: 'stroke', symbolSize: 300 } as const;
  return {
    width: chartWidth,
    height: chartHeight,
    config: baseConfig,
    data: { values: rows.map((r) => ({ series: r.series, x: r[options.axis], suboptimality: r.suboptimality })) },
    mark: { type: 'line', clip: true, strokeWidth: 1.5 },
    encoding: {
      x: { field: 'x', type: 'quantitative', title: options.axisTitle ?? curveAxisTitles[options.axis], axis: options.axis === 'payloadBytes' ? { format: '~s' } : {} },
      y: {
        field: 'suboptimality',
        type: 'quantitative',
        title: 'f(x) - f*',
        scale: { type: 'log', ...(options.yDomain ? { domain: options.yDomain } : {}) },
        axis: { format: '.0e' },
      },
      // One legend shows both channels: the same field, domain and legend settings merge them.
      color: { field: 'series', type: 'nominal', sort: options.series, scale: { domain: options.series, scheme: options.series.length > 10 ? 'category20' : 'category10' }, legend },
      strokeDash: {
        field: 'series',
        type: 'nominal',
        sort: options.series,
        scale: { domain: options.series, range: options.series.map((s) => (dashed.has(s) ? [6, 4] : [1, 0])) },
        legend,
      },
    },
  };
}

export function bytesChartSpec(rows: readonly BytesRow[], series: string[]): TopLevelSpec {
  return {
    width: chartWidth,
    height: chartHeight,
    config: baseConfig,
    data: { values: rows.map((r) => ({ ...r })) },
    mark: { type: 'line', point: rows.length <= 400 ? { size: 12 } : false, strokeWidth: 1.5 },
    encoding: {
      x: { field: 'round', type: 'quantitative', title: 'round' },
      y: { field: 'bytes', type: 'quantitative', title: 'bytes in the round (all clients)', axis: { format: '~s' } },
      color: { field: 'series', type: 'nominal', sort: series, scale: { domain: series }, legend: { orient: 'bottom', title: null } },
    },
  };
}

export function histogramChartSpec(bars: readonly HistogramBar[]): TopLevelSpec {
  return {
    width: chartWidth,
    height: 200,
    config: baseConfig,
    data: { values: bars.map((b) => ({ ...b })) },
    mark: { type: 'bar', color: '#4c78a8' },
    encoding: {
      x: { field: 'label', type: 'ordinal', sort: bars.map((b) => b.label), title: 'local steps tau_i', axis: { labelAngle: 0 } },
      y: { field: 'count', type: 'quantitative', title: '(client, round) pairs' },
    },
  };
}

const activityColours = { compute: '#4c78a8', transfer: '#f58518', idle: '#d3d3d3' };

export function timelineChartSpec(segments: readonly TimelineSegment[], clientLabels: string[]): TopLevelSpec {
  const activities = Object.keys(activityColours);
  return {
    width: chartWidth,
    height: { step: Math.max(6, Math.min(16, Math.floor(480 / Math.max(1, clientLabels.length)))) },
    config: baseConfig,
    data: { values: segments.map((s) => ({ ...s })) },
    mark: { type: 'rect' },
    encoding: {
      x: { field: 'start', type: 'quantitative', title: 'modelled seconds since the first shown round began' },
      x2: { field: 'end' },
      y: { field: 'client', type: 'nominal', sort: clientLabels, title: null },
      color: { field: 'activity', type: 'nominal', scale: { domain: activities, range: Object.values(activityColours) }, legend: { orient: 'bottom', title: null } },
    },
  };
}
