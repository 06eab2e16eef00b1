// Vega-Lite specifications of every chart in the reports. Data arrive inline and already
// bounded; nothing refers to a URL, so the rendered SVG needs nothing from the network. Every
// colour and line style comes from palette.ts; no chart falls back on the library's scheme.

import type { TopLevelSpec } from 'vega-lite';
import {
  ACTIVITY_COLOURS,
  BAND_OPACITIES,
  DIRECTION_STYLES,
  LAYER_COLOURS,
  NEUTRAL_MARK_COLOUR,
} from './palette.js';
import type {
  BytesRow,
  CurvePointRow,
  HistogramBar,
  Layer,
  TimelineSegment,
} from './run-series.js';
import type { AccuracyRow } from './held-out-series.js';

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

/** One line of a curve chart and how it is drawn. */
export interface CurveSeries {
  label: string;
  /** a palette colour (palette.ts): the method's */
  colour: string;
  /** a palette dash: solid for a measurement, PREDICTED_DASH for a prediction */
  dash: readonly number[];
}

export interface CurveChartOptions {
  axis: CurveAxis;
  /** overrides the axis title, e.g. to say which clock the seconds come from */
  axisTitle?: string;
  /** series in legend order */
  series: readonly CurveSeries[];
  /** the y range, when some series (a prediction) should not stretch it */
  yDomain?: [number, number];
  /** a predicted band drawn behind the lines (rounds axis only), in one palette colour */
  band?: { rows: readonly CurveBandRow[]; colour: string };
}

/** One round of a band: kind 'single-run' (where one run is expected) or 'mean' (the mean's interval). */
export interface CurveBandRow {
  kind: keyof typeof BAND_OPACITIES;
  round: number;
  low: number;
  high: number;
}

/** The band's area layers, one a kind, in one colour: the mean's more opaque and drawn over. */
function bandLayers(band: NonNullable<CurveChartOptions['band']>, yScale: object) {
  const kinds = Object.keys(BAND_OPACITIES) as (keyof typeof BAND_OPACITIES)[];
  return kinds.map((kind) => ({
    data: { values: band.rows.filter((r) => r.kind === kind).map((r) => ({ ...r })) },
    mark: { type: 'area', clip: true, color: band.colour, opacity: BAND_OPACITIES[kind] },
    encoding: {
      x: { field: 'round', type: 'quantitative' },
      y: { field: 'low', type: 'quantitative', title: 'f(x) - f*', scale: yScale },
      y2: { field: 'high' },
    },
  }));
}

/** Suboptimality on a log scale against rounds, cumulative bytes or seconds, one line a series. */
export function curveChartSpec(
  rows: readonly CurvePointRow[],
  options: CurveChartOptions,
): TopLevelSpec {
  const labels = options.series.map((s) => s.label);
  const legend = {
    orient: 'bottom',
    columns: 2,
    title: null,
    symbolType: 'stroke',
    symbolSize: 300,
    symbolStrokeWidth: 2,
  } as const;
  const yScale = { type: 'log', ...(options.yDomain ? { domain: options.yDomain } : {}) } as const;
  const lines = {
    data: {
      values: rows.map((r) => ({
        series: r.series,
        x: r[options.axis],
        suboptimality: r.suboptimality,
      })),
    },
    mark: { type: 'line', clip: true, strokeWidth: 1.5 },
    encoding: {
      x: {
        field: 'x',
        type: 'quantitative',
        title: options.axisTitle ?? curveAxisTitles[options.axis],
        axis: options.axis === 'payloadBytes' ? { format: '~s' } : {},
      },
      y: {
        field: 'suboptimality',
        type: 'quantitative',
        title: 'f(x) - f*',
        scale: yScale,
        axis: { format: '.0e' },
      },
      // One legend shows both channels: the same field, domain and legend settings merge them.
      color: {
        field: 'series',
        type: 'nominal',
        sort: labels,
        scale: { domain: labels, range: options.series.map((s) => s.colour) },
        legend,
      },
      strokeDash: {
        field: 'series',
        type: 'nominal',
        sort: labels,
        scale: { domain: labels, range: options.series.map((s) => [...s.dash]) },
        legend,
      },
    },
  } as const;
  const frame = { width: chartWidth, height: chartHeight, config: baseConfig };
  // The band goes first so that the measured line is drawn over it.
  if (options.band !== undefined && options.axis === 'round')
    return { ...frame, layer: [...bandLayers(options.band, yScale), lines] } as TopLevelSpec;
  return { ...frame, ...lines } as TopLevelSpec;
}

/** Bytes per round: colour says the layer, line style and point shape the direction. */
export function bytesChartSpec(rows: readonly BytesRow[], layers: readonly Layer[]): TopLevelSpec {
  const directions = Object.keys(DIRECTION_STYLES) as (keyof typeof DIRECTION_STYLES)[];
  const directionLegend = {
    orient: 'bottom',
    title: 'direction',
    symbolType: 'stroke',
    symbolSize: 300,
    symbolStrokeWidth: 2,
  } as const;
  return {
    width: chartWidth,
    height: chartHeight,
    config: baseConfig,
    data: { values: rows.map((r) => ({ ...r })) },
    mark: {
      type: 'line',
      point: rows.length <= 400 ? { size: 14, filled: true } : false,
      strokeWidth: 1.5,
    },
    encoding: {
      x: { field: 'round', type: 'quantitative', title: 'round' },
      y: {
        field: 'bytes',
        type: 'quantitative',
        title: 'bytes in the round (all clients)',
        axis: { format: '~s' },
      },
      color: {
        field: 'layer',
        type: 'nominal',
        sort: [...layers],
        scale: { domain: [...layers], range: layers.map((l) => LAYER_COLOURS[l]) },
        legend: { orient: 'bottom', title: 'layer' },
      },
      strokeDash: {
        field: 'direction',
        type: 'nominal',
        sort: directions,
        scale: { domain: directions, range: directions.map((d) => [...DIRECTION_STYLES[d].dash]) },
        legend: directionLegend,
      },
      ...(rows.length <= 400
        ? {
            shape: {
              field: 'direction',
              type: 'nominal',
              sort: directions,
              scale: {
                domain: directions,
                range: directions.map((d) => DIRECTION_STYLES[d].shape),
              },
              legend: directionLegend,
            },
          }
        : {}),
    },
  };
}

export function histogramChartSpec(bars: readonly HistogramBar[]): TopLevelSpec {
  return {
    width: chartWidth,
    height: 200,
    config: baseConfig,
    data: { values: bars.map((b) => ({ ...b })) },
    mark: { type: 'bar', color: NEUTRAL_MARK_COLOUR },
    encoding: {
      x: {
        field: 'label',
        type: 'ordinal',
        sort: bars.map((b) => b.label),
        title: 'local steps tau_i',
        axis: { labelAngle: 0 },
      },
      y: { field: 'count', type: 'quantitative', title: '(client, round) pairs' },
    },
  };
}

export function timelineChartSpec(
  segments: readonly TimelineSegment[],
  clientLabels: string[],
): TopLevelSpec {
  const activities = Object.keys(ACTIVITY_COLOURS);
  return {
    width: chartWidth,
    height: { step: Math.max(6, Math.min(16, Math.floor(480 / Math.max(1, clientLabels.length)))) },
    config: baseConfig,
    data: { values: segments.map((s) => ({ ...s })) },
    mark: { type: 'rect' },
    encoding: {
      x: {
        field: 'start',
        type: 'quantitative',
        title: 'modelled seconds since the first shown round began',
      },
      x2: { field: 'end' },
      y: { field: 'client', type: 'nominal', sort: clientLabels, title: null },
      color: {
        field: 'activity',
        type: 'nominal',
        scale: { domain: activities, range: Object.values(ACTIVITY_COLOURS) },
        legend: { orient: 'bottom', title: null },
      },
    },
  };
}

/** Held-out accuracy on a linear [0, 1] scale against rounds, one line a series. */
export function accuracyChartSpec(
  rows: readonly AccuracyRow[],
  series: readonly CurveSeries[],
): TopLevelSpec {
  const labels = series.map((s) => s.label);
  const legend = {
    orient: 'bottom',
    columns: 3,
    title: null,
    symbolType: 'stroke',
    symbolSize: 300,
    symbolStrokeWidth: 2,
  } as const;
  return {
    width: chartWidth,
    height: chartHeight,
    config: baseConfig,
    data: { values: rows.map((r) => ({ ...r })) },
    mark: { type: 'line', clip: true, strokeWidth: 1.5 },
    encoding: {
      x: { field: 'round', type: 'quantitative', title: 'round' },
      y: {
        field: 'accuracy',
        type: 'quantitative',
        title: 'test accuracy',
        scale: { domain: [0, 1] },
      },
      color: {
        field: 'series',
        type: 'nominal',
        sort: labels,
        scale: { domain: labels, range: series.map((s) => s.colour) },
        legend,
      },
      strokeDash: {
        field: 'series',
        type: 'nominal',
        sort: labels,
        scale: { domain: labels, range: series.map((s) => [...s.dash]) },
        legend,
      },
    },
  } as TopLevelSpec;
}
