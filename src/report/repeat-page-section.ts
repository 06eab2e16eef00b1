// compare.html's part for repeats: the table of means and intervals, and one error-bar chart a
// figure that some variant has.

import { figure, grid, paragraph, section, table, type Html } from './html-page.js';
import { renderSvg } from './render-svg.js';
import { errorBarChartSpec, errorBarRows } from './repeat-chart.js';
import { figureWords } from './repeat-figures.js';
import type { RepeatSummary } from './repeat-summary.js';
import { repeatTableHeader, repeatTableRows } from './repeat-table.js';
import { formatNumber } from './text-table.js';

export async function repeatSection(r: RepeatSummary): Promise<Html> {
  const order = r.variants.map((v) => v.variant);
  const charts: Html[] = [];
  for (const f of r.figures) {
    const rows = errorBarRows(r, f);
    if (rows.length === 0) continue;
    charts.push(
      figure(
        await renderSvg(errorBarChartSpec(rows, f, order), `repeats-${f}`),
        `Mean over ${r.count} repeats (point) and its ${formatNumber(r.confidence * 100)}% interval (bar); a variant missing the figure in every repeat has no point.`,
        `${figureWords(f)}: mean and interval`,
      ),
    );
  }
  return section('Repeats', [
    paragraph(
      `${r.count} runs a variant, repeat r of every variant on the same seeds; ${r.redrawData ? 'the data redrawn with each seed' : 'the data fixed'}. ${r.intervalRule}`,
      'note',
    ),
    table(repeatTableHeader(r), repeatTableRows(r), formatNumber),
    grid(charts),
  ]);
}
