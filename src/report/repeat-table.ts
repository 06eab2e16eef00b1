// A comparison over repeats in words and numbers: one table row per variant with each figure as
// mean ± half-width (t-interval) or mean [lower, upper] (bootstrap interval), the verdict lines,
// and compare-repeats.csv (RFC 4180) with one row per variant and figure.

import { formatNumber, formatTable, type Cell } from './text-table.js';
import type { FigureStatistics } from './repeat-statistics.js';
import { FIGURE_UNITS, figureWords, type RepeatFigure } from './repeat-figures.js';
import type { RepeatSummary } from './repeat-summary.js';
import type { FigureVerdict } from './repeat-verdict.js';
import type { Comparison } from './compare-table.js';

const FIGURE_TITLES: Record<RepeatFigure, string> = {
  roundsToTarget: 'fewest rounds to target',
  bytesToTarget: 'fewest bytes to target',
  uplinkBytesToTarget: 'fewest uplink bytes to target',
  secondsToTarget: 'least time to target',
  roundsToTargetAccuracy: 'fewest rounds to target accuracy',
  bytesToTargetAccuracy: 'fewest bytes to target accuracy',
  secondsToTargetAccuracy: 'least time to target accuracy',
  finalSuboptimality: 'least final suboptimality',
  rateMeasured: 'least measured rate',
  floorMeasured: 'least measured floor',
};

function percent(confidence: number): string {
  return `${formatNumber(Number((confidence * 100).toPrecision(4)))}%`;
}

/** A figure's cell: "mean ± half" for a t-interval, "mean [lower, upper]" for a bootstrap one. */
export function statisticsCell(s: FigureStatistics, count: number): string {
  if (s.mean === null) return `- (0/${count})`;
  let text = formatNumber(s.mean);
  if (s.method === 't')
    text += ` ± ${formatNumber(((s.upper as number) - (s.lower as number)) / 2)}`;
  if (s.method === 'bootstrap') text += ` [${formatNumber(s.lower)}, ${formatNumber(s.upper)}]`;
  return s.missing > 0 ? `${text} (${s.n}/${count})` : text;
}

function stopsCell(runs: RepeatSummary['variants'][number]['runs']): string {
  const counts = new Map<string, number>();
  for (const r of runs) counts.set(r.stop, (counts.get(r.stop) ?? 0) + 1);
  return [...counts].map(([stop, n]) => `${n} ${stop}`).join(', ');
}

export function repeatTableHeader(r: RepeatSummary): string[] {
  return [
    'variant',
    'stops',
    ...r.figures.map((f) =>
      FIGURE_UNITS[f] === undefined ? figureWords(f) : `${figureWords(f)} [${FIGURE_UNITS[f]}]`,
    ),
  ];
}

export function repeatTableRows(r: RepeatSummary): Cell[][] {
  return r.variants.map((v) => [
    v.variant,
    stopsCell(v.runs),
    ...r.figures.map((f) => statisticsCell(v.figures[f], r.count)),
  ]);
}

function verdictLine(v: FigureVerdict, confidence: number, count: number): string {
  const title = FIGURE_TITLES[v.figure];
  const unit = FIGURE_UNITS[v.figure] === undefined ? '' : ` ${FIGURE_UNITS[v.figure]}`;
  const partial =
    v.partial.length > 0 ? `; not ranked, missing it in some repeats: ${v.partial.join(', ')}` : '';
  if (v.leader === null) return `${title}: no variant has it in every repeat${partial}`;
  const leader = `${v.leader.variant} (mean ${formatNumber(v.leader.mean)}${unit})`;
  if (v.runnerUp === null || v.difference === null)
    return `${title}: ${leader}, the only variant that has it in every repeat${partial}`;
  const d = v.difference;
  const interval = `${percent(confidence)} paired t-interval of the difference over ${count} repeats [${formatNumber(d.lower)}, ${formatNumber(d.upper)}]${unit}`;
  if (d.lower === 0 && d.upper === 0)
    return `${title}: no clear winner at ${percent(confidence)} confidence: ${leader} and runner-up ${v.runnerUp.variant} are equal in every repeat${partial}`;
  if (v.decision === 'clear-winner')
    return `${title}: ${leader}, a clear winner at ${percent(confidence)} confidence: runner-up ${v.runnerUp.variant} needs ${formatNumber(d.mean)}${unit} more (${interval})${partial}`;
  return `${title}: no clear winner at ${percent(confidence)} confidence: ${leader} leads runner-up ${v.runnerUp.variant} by ${formatNumber(d.mean)}${unit}, but the ${interval} contains 0${partial}`;
}

/** The verdict in words, one line a ranked figure, after a line on diverged and failed runs. */
export function repeatVerdictLines(r: RepeatSummary): string[] {
  const lines: string[] = [];
  for (const v of r.variants) {
    if (v.diverged + v.failed === 0) continue;
    const reasons = [...new Set(v.runs.filter((x) => x.failure !== null).map((x) => x.failure))];
    lines.push(
      `${v.variant}: ${v.diverged} of ${r.count} repeats diverged, ${v.failed} failed${reasons.length > 0 ? ` (${reasons.join('; ')})` : ''}`,
    );
  }
  return [...lines, ...r.verdict.map((v) => verdictLine(v, r.confidence, r.count))];
}

export function formatRepeatSummary(r: RepeatSummary): string {
  return [
    `${r.count} repeats a variant, ${r.redrawData ? 'data redrawn with each seed' : 'data fixed'}; each figure is mean ± half-width of its ${percent(r.confidence)} interval, or mean [lower, upper] where the interval is a bootstrap one; (n/${r.count}) counts the repeats that have it`,
    '',
    formatTable(repeatTableHeader(r), repeatTableRows(r)),
    '',
    ...repeatVerdictLines(r),
    `intervals: ${r.intervalRule}`,
  ].join('\n');
}

export const repeatCsvColumns = [
  'variant',
  'figure',
  'n',
  'missing',
  'mean',
  'sd',
  'lower',
  'upper',
  'method',
  'confidence',
] as const;

function csvField(value: string | number | null): string {
  if (value === null) return '';
  const text = String(value);
  return /[",\r\n]/.test(text) ? `"${text.replace(/"/g, '""')}"` : text;
}

/** RFC 4180 CSV, CRLF line ends: one row per variant and figure. */
export function repeatCsv(r: RepeatSummary): string {
  const lines: string[] = [repeatCsvColumns.join(',')];
  for (const v of r.variants)
    for (const figure of r.figures) {
      const s = v.figures[figure];
      lines.push(
        [v.variant, figure, s.n, s.missing, s.mean, s.sd, s.lower, s.upper, s.method, r.confidence]
          .map(csvField)
          .join(','),
      );
    }
  return `${lines.join('\r\n')}\r\n`;
}

/** The printed comparison over repeats: what ran, the repeats table, the verdict, where the files are. */
export function formatRepeatedComparison(c: Comparison, r: RepeatSummary, outDir: string): string {
  const basis =
    c.timeBasis === 'modelled' ? 'seconds are modelled (virtual clock)' : 'seconds are wall-clock';
  return (
    [
      `${c.scenario}: ${c.variants.length} variants x ${r.count} repeats, ${c.runtime}, target ${formatNumber(c.target)}; bytes are payload bytes up and down; ${basis}`,
      formatRepeatSummary(r),
      `results: ${outDir} (compare.html, compare.csv with repeat 1, compare-repeats.csv, compare.json, one folder per variant with one per repeat)`,
    ].join('\n') + '\n'
  );
}
