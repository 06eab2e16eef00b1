// compare.html's error bars: one chart a figure, one point a variant at its mean over the
// repeats, with a bar from the interval's lower to its upper end. Variants without the figure in
// any repeat have no point; the table beside says how many repeats had it.

import type { TopLevelSpec } from 'vega-lite';
import { NEUTRAL_MARK_COLOUR } from './palette.js';
import { FIGURE_UNITS, figureWords, type RepeatFigure } from './repeat-figures.js';
import type { RepeatSummary } from './repeat-summary.js';

export interface ErrorBarRow {
  variant: string;
  mean: number;
  lower: number;
  upper: number;
}

/** The rows of one figure's chart; a variant with one value draws a point without a bar. */
export function errorBarRows(r: RepeatSummary, figure: RepeatFigure): ErrorBarRow[] {
  const rows: ErrorBarRow[] = [];
  for (const v of r.variants) {
    const s = v.figures[figure];
    if (s.mean === null) continue;
    rows.push({
      variant: v.variant,
      mean: s.mean,
      lower: s.lower ?? s.mean,
      upper: s.upper ?? s.mean,
    });
  }
  return rows;
}

export function errorBarChartSpec(
  rows: readonly ErrorBarRow[],
  figure: RepeatFigure,
  variantOrder: readonly string[],
): TopLevelSpec {
  const unit = FIGURE_UNITS[figure];
  const x = {
    field: 'variant',
    type: 'nominal' as const,
    sort: [...variantOrder],
    title: 'variant',
    axis: { labelAngle: -30, labelLimit: 240 },
  };
  return {
    width: 560,
    height: 220,
    config: {
      background: 'white',
      font: 'sans-serif',
      view: { stroke: '#ccc' },
      axis: { labelFontSize: 11, titleFontSize: 12 },
    },
    data: { values: rows.map((row) => ({ ...row })) },
    layer: [
      {
        mark: { type: 'rule', color: NEUTRAL_MARK_COLOUR, strokeWidth: 2 },
        encoding: {
          x,
          y: { field: 'lower', type: 'quantitative', scale: { zero: false } },
          y2: { field: 'upper' },
        },
      },
      {
        mark: { type: 'point', filled: true, color: 'black', size: 40 },
        encoding: {
          x,
          y: {
            field: 'mean',
            type: 'quantitative',
            title:
              unit === undefined
                ? `${figureWords(figure)} (mean)`
                : `${figureWords(figure)} [${unit}] (mean)`,
          },
        },
      },
    ],
  };
}
