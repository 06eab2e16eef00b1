// compare.html: the comparison table, the verdict lines and every variant's suboptimality curve
// overlaid against rounds, payload bytes and seconds. A variant is drawn in its method's colour;
// variants of one method differ by line style.

import { formatNumber } from './text-table.js';
import { curveChartSpec, type CurveAxis, type CurveSeries } from './chart-specs.js';
import {
  tableHeader,
  tableRows,
  verdictLines,
  type Comparison,
  type VariantOutcome,
} from './compare-table.js';
import { figure, grid, heading, page, paragraph, section, table, type Html } from './html-page.js';
import { methodColour, VARIANT_DASHES } from './palette.js';
import { ladderOptionText } from './ladder.js';
import { renderSvg } from './render-svg.js';
import { measuredCurve, type CurvePointRow } from './run-series.js';
import { repeatSection } from './repeat-page-section.js';
import type { RepeatSummary } from './repeat-summary.js';
import { repeatVerdictLines } from './repeat-table.js';
import { tuningLine } from './tuning-trace.js';

/** Points drawn in all for one chart, shared among the variants. */
const comparePointsMax = 6000;

/** Each variant's line: its method's colour, and the next line style among that method's variants. */
export function variantSeries(
  labels: readonly string[],
  methods: readonly string[],
): CurveSeries[] {
  const seen = new Map<string, number>();
  return labels.map((label, i) => {
    const nth = seen.get(methods[i]) ?? 0;
    seen.set(methods[i], nth + 1);
    return {
      label,
      colour: methodColour(methods[i]),
      dash: VARIANT_DASHES[nth % VARIANT_DASHES.length],
    };
  });
}

/**
 * `outcomes` in the order of the comparison's rows. With `repeats`, the verdict is the one over
 * the repeats and a section shows their intervals; the curves stay those of repeat 1.
 */
export async function buildComparePage(
  c: Comparison,
  outcomes: readonly Pick<VariantOutcome, 'summary' | 'rounds'>[],
  repeats?: RepeatSummary,
): Promise<string> {
  const perVariant = Math.max(50, Math.floor(comparePointsMax / Math.max(1, c.variants.length)));
  const clock = c.timeBasis === 'modelled' ? 'virtual' : 'wall';
  const rows: CurvePointRow[] = [];
  let thinned = false;
  // A failed variant has no curve; the table says why.
  const drawn = c.variants.flatMap((r, i) => {
    const summary = outcomes[i].summary;
    return summary === null ? [] : [{ label: r.variant, method: summary.method, i }];
  });
  for (const { label, i } of drawn) {
    const curve = measuredCurve(outcomes[i].rounds, clock, label, perVariant);
    thinned ||= curve.points.length < curve.pointsTotal;
    rows.push(...curve.points);
  }
  const series = variantSeries(
    drawn.map((d) => d.label),
    drawn.map((d) => d.method),
  );
  const caption = `One line a variant, same seed, speeds and links; colour says the method, line style tells apart variants of one method. ${thinned ? `At most ${perVariant} points a variant, evenly spread. ` : ''}Target ${formatNumber(c.target)}.`;
  const axes: [CurveAxis, string, string | undefined][] = [
    ['round', 'Suboptimality against rounds', undefined],
    ['payloadBytes', 'Suboptimality against payload bytes', undefined],
    [
      'seconds',
      'Suboptimality against seconds',
      c.timeBasis === 'modelled' ? 'modelled seconds (virtual clock)' : 'wall seconds',
    ],
  ];
  const figures: Html[] = [];
  for (const [axis, title, axisTitle] of axes) {
    figures.push(
      figure(
        await renderSvg(
          curveChartSpec(rows, { axis, series, ...(axisTitle ? { axisTitle } : {}) }),
          `compare-${axis}`,
        ),
        caption,
        title,
      ),
    );
  }
  const laddersText = c.ladders.map((l) => `--ladder ${ladderOptionText(l)}`).join(' ');
  return page(`roundwire compare: ${c.scenario}`, [
    heading(`roundwire compare: ${c.scenario}`),
    paragraph(
      `${c.variants.length} variants (${laddersText}), ${c.runtime} runtime; seconds are ${c.timeBasis === 'modelled' ? 'modelled (virtual clock)' : 'wall-clock'}.`,
      'note',
    ),
    ...(repeats === undefined ? verdictLines(c) : repeatVerdictLines(repeats)).map((line) =>
      paragraph(line, 'verdict'),
    ),
    ...(c.tuning === undefined ? [] : [paragraph(tuningLine(c.tuning), 'note')]),
    ...(repeats === undefined ? [] : [await repeatSection(repeats)]),
    section('Variants', [
      table(tableHeader, tableRows(c), formatNumber),
      paragraph(
        'Each variant has its own results folder (with its report.html) beside this page.',
        'note',
      ),
    ]),
    section('Convergence', [grid(figures)]),
  ]);
}
