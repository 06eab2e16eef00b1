// report.html of one run: the suboptimality curve against rounds, bytes and seconds with the
// predicted curve beside it, bytes per round by layer, the per-client timeline, the tau_i
// histogram, the summary table (measured beside predicted) and the rate beside its published
// bounds. A run with random rounds has a predicted band instead of a predicted line
// (band-series.ts), drawn behind its curve.

import { gapName } from './gap-name.js';
import type { RunSummary } from '../engine/run-summary.js';
import { formatNumber } from './text-table.js';
import {
  accuracyChartSpec,
  bytesChartSpec,
  curveChartSpec,
  histogramChartSpec,
  timelineChartSpec,
  type CurveAxis,
  type CurveSeries,
} from './chart-specs.js';
import { bandCaption, bandRows, bandSummaryRows } from './band-series.js';
import {
  figure,
  grid,
  heading,
  page,
  paragraph,
  section,
  table,
  type Html,
  type TableCell,
} from './html-page.js';
import { ACCURACY_DASHES, methodColour, PREDICTED_DASH, SOLID_DASH } from './palette.js';
import { ACCURACY_SERIES, accuracyCurve } from './held-out-series.js';
import { renderSvg } from './render-svg.js';
import { RATE_COMPARISON_HEADER, rateComparisonRows } from './rate-comparison.js';
import type { RunResults } from './run-results.js';
import {
  bytesByLayer,
  localStepsHistogram,
  measuredCurve,
  predictedCurve,
  SERIES_LIMITS,
} from './run-series.js';

const measuredLabel = 'measured';
const predictedLabel = 'predicted: the ideal round map from x0';

export function secondsTitle(clock: RunSummary['clock']): string {
  return clock === 'virtual' ? 'modelled seconds (virtual clock)' : 'wall seconds (wall clock)';
}

/**
 * The rate over the asymptotic window (measured beside the predicted trajectory's over the same
 * rounds) and the window's status; the standard error travels with the measured rate.
 */
function windowRows(s: RunSummary): TableCell[][] {
  const a = s.rate.asymptotic;
  const rows: TableCell[][] = [['rate window', a.note, null]];
  if (a.window !== null)
    rows.push([
      `rate over rounds ${a.window[0]}-${a.window[1]}`,
      a.measuredStandardError === null
        ? a.measured
        : `${formatNumber(a.measured)} ± ${formatNumber(a.measuredStandardError)}`,
      a.predictedOverWindow,
    ]);
  return rows;
}

function summaryRows(s: RunSummary): TableCell[][] {
  const gap = gapName(s.theory.reference !== null);
  return [
    [`${gap}, initial`, s.suboptimality.initial, null],
    [`${gap}, final`, s.suboptimality.final, null],
    [
      s.prediction.kind === 'local'
        ? 'rate per round, straight fit (predicted: local, near the limit)'
        : 'rate per round, straight fit',
      s.rate.measured,
      s.rate.predicted,
    ],
    ...windowRows(s),
    ['floor f(limit) - f*', s.floor.measured, s.floor.predicted],
    ['||x - x*||, final', s.distance.final, s.prediction.limitDistance],
    ...bandSummaryRows(s.band),
    ['rounds', s.rounds, null],
    [`rounds to target ${formatNumber(s.target)}`, s.roundsToTarget, null],
    ['payload bytes to target', s.toTarget.payloadBytes, null],
    ['payload bytes up', s.bytes.payload.up, null],
    ['payload bytes down', s.bytes.payload.down, null],
    ...(s.bytes.encoded
      ? ([
          ['encoded bytes up / down', `${s.bytes.encoded.up} / ${s.bytes.encoded.down}`, null],
        ] as TableCell[][])
      : []),
    ...(s.bytes.wire
      ? ([
          ['wire bytes up / down', `${s.bytes.wire.up} / ${s.bytes.wire.down}`, null],
        ] as TableCell[][])
      : []),
    ['modelled seconds', s.seconds.virtual, null],
    ['wall seconds', s.seconds.wall, null],
    ['dropped updates', s.droppedUpdates, null],
    ['L (smoothness)', s.theory.smoothness, null],
    ['mu (strong convexity)', s.theory.strongConvexity, null],
    ['heterogeneity sum p_i ||grad f_i(x*)||^2', s.theory.heterogeneity, null],
    ['optimality certificate ||grad f(x*)||', s.theory.certificate, null],
  ];
}

function curveCaption(
  results: RunResults,
  curve: ReturnType<typeof measuredCurve>,
  predicted: boolean,
): string {
  const s = results.summary;
  const ideal =
    "the predicted trajectory, the ideal round map (no compression, no drops, the plan's tau_i) iterated from the same x0";
  const parts = [
    !predicted
      ? `No prediction is drawn: ${s.prediction.reason ?? 'the run recorded no predicted trajectory'}.`
      : s.prediction.available
        ? `Dashed: ${ideal}; it tends to the predicted floor ${formatNumber(s.floor.predicted)} at the predicted ${s.prediction.kind === 'local' ? 'local ' : ''}rate ${formatNumber(s.rate.predicted)} a round${s.prediction.kind === 'local' ? ' (local: the round map linearized at its limit, a rate that holds once the run is near the limit)' : ''}.`
        : `Dashed: ${ideal}. No asymptotic rate or floor is predicted: ${s.prediction.reason ?? 'none was solved'}.`,
  ];
  if (predicted)
    parts.push(
      'With nothing injected the two curves coincide; the gap is what compression, stragglers and drops cost.',
    );
  if (s.band !== undefined) parts.push(bandCaption(s.band));
  if (curve.points.length < curve.pointsTotal)
    parts.push(
      `${curve.points.length} of ${curve.pointsTotal} evaluated rounds drawn, evenly spread.`,
    );
  if (curve.nonPositive > 0)
    parts.push(`${curve.nonPositive} rounds with f(x) - f* <= 0 left out (log scale).`);
  if (curve.diverged)
    parts.push('The run diverged; the curve stops before the first non-finite value.');
  return parts.join(' ');
}

async function curveFigures(results: RunResults): Promise<Html[]> {
  const s = results.summary;
  const curve = measuredCurve(results.rounds, s.clock, measuredLabel);
  const prediction = predictedCurve(results.rounds, curve.points, predictedLabel);
  const rows = prediction === null ? curve.points : [...curve.points, ...prediction];
  // Both lines in the method's colour: the line style, not the colour, says which is the prediction.
  const colour = methodColour(s.method);
  const measuredSeries: CurveSeries = { label: measuredLabel, colour, dash: SOLID_DASH };
  const series =
    prediction === null
      ? [measuredSeries]
      : [measuredSeries, { label: predictedLabel, colour, dash: PREDICTED_DASH }];
  const values = curve.points.map((p) => p.suboptimality);
  const yDomain: [number, number] | undefined =
    prediction !== null && values.length > 0
      ? [Math.min(...values), Math.max(...values)]
      : undefined;
  const caption = curveCaption(results, curve, prediction !== null);
  const band = s.band === undefined ? [] : bandRows(s.band);
  const axes: [CurveAxis, string][] = [
    ['round', 'Suboptimality against rounds'],
    ['payloadBytes', 'Suboptimality against payload bytes'],
    ['seconds', 'Suboptimality against seconds'],
  ];
  const figures: Html[] = [];
  for (const [axis, title] of axes) {
    const spec = curveChartSpec(rows, {
      axis,
      series,
      yDomain,
      ...(axis === 'seconds' ? { axisTitle: secondsTitle(s.clock) } : {}),
      ...(band.length > 0 ? { band: { rows: band, colour } } : {}),
    });
    figures.push(figure(await renderSvg(spec, `curve-${axis}`), caption, title));
  }
  return figures;
}

async function bytesFigure(results: RunResults): Promise<Html> {
  const bytes = bytesByLayer(results.rounds);
  const notes = [`Layers recorded: ${bytes.layers.join(', ')}; uplink solid, downlink dotted.`];
  if (!bytes.layers.includes('wire'))
    notes.push(
      'Encoded and wire bytes are counted where a network carries the run (the distributed runtime).',
    );
  const shown = new Set(bytes.rows.map((r) => r.round)).size;
  if (shown < bytes.roundsTotal)
    notes.push(`${shown} of ${bytes.roundsTotal} rounds drawn, evenly spread.`);
  return figure(
    await renderSvg(bytesChartSpec(bytes.rows, bytes.layers), 'bytes'),
    notes.join(' '),
    'Bytes per round by layer',
  );
}

async function timelineFigure(results: RunResults): Promise<Html> {
  const timeline = results.timeline;
  const labels = [...new Set(timeline.segments.map((s) => s.client))].sort(
    (a, b) => Number(a.slice(7)) - Number(b.slice(7)),
  );
  const notes = [
    timeline.roundsShown.length > 0
      ? `Rounds ${timeline.roundsShown[0]} to ${timeline.roundsShown[timeline.roundsShown.length - 1]} (the last ${timeline.roundsShown.length}, at most ${SERIES_LIMITS.timelineRoundsMax}); each exchange laid out as compute, transfer, then idle until the round closes.`
      : 'No rounds with client records.',
  ];
  if (timeline.clientsShown < timeline.clientsTotal)
    notes.push(
      `${timeline.clientsShown} of ${timeline.clientsTotal} clients are shown, the lowest ids taking part in those rounds.`,
    );
  return figure(
    await renderSvg(timelineChartSpec(timeline.segments, labels), 'timeline'),
    notes.join(' '),
    'Per-client timeline: compute, transfer, idle',
  );
}

async function histogramFigure(results: RunResults): Promise<Html> {
  const bars = localStepsHistogram(results.rounds);
  const pairs = bars.reduce((n, b) => n + b.count, 0);
  const binned = bars.some((b) => b.low !== b.high);
  const caption = `${pairs} (client, round) pairs of the local-work exchange${binned ? `, in ${bars.length} equal-width bins` : ''}.`;
  return figure(
    await renderSvg(histogramChartSpec(bars), 'tau'),
    caption,
    'Distribution of local steps tau_i',
  );
}

/** Test loss and accuracy at the last evaluated round, and the rounds to the target accuracy. */
function heldOutRows(heldOut: NonNullable<RunSummary['heldOut']>): TableCell[][] {
  const { final } = heldOut;
  const rows: TableCell[][] = [['test loss (mean, no L2 term)', final.loss]];
  if (final.accuracy !== null) rows.push(['test accuracy, pooled', final.accuracy]);
  if (final.clientAccuracy !== null) {
    const c = final.clientAccuracy;
    rows.push(
      ['test accuracy, mean over clients', c.mean],
      [`test accuracy, worst client (client ${c.worstClientId})`, c.worst],
      ['test accuracy, best minus worst client', c.range],
    );
  }
  if (heldOut.targetAccuracy !== null) {
    const target = formatNumber(heldOut.targetAccuracy);
    rows.push(
      [`rounds to test accuracy ${target}`, heldOut.roundsToTargetAccuracy],
      [`payload bytes to test accuracy ${target}`, heldOut.toTargetAccuracy.payloadBytes],
    );
  }
  return rows;
}

/** The held-out section: a table of the last evaluation and, for a classifier, the accuracy curves. */
async function heldOutSection(results: RunResults): Promise<Html[]> {
  const heldOut = results.summary.heldOut;
  if (heldOut === undefined) return [];
  const parts: Html[] = [
    table(['quantity', 'last evaluated round'], heldOutRows(heldOut), formatNumber),
  ];
  const curve = accuracyCurve(results.rounds);
  if (curve.rows.length > 0) {
    const colour = methodColour(results.summary.method);
    const series = (Object.keys(ACCURACY_SERIES) as (keyof typeof ACCURACY_SERIES)[]).map(
      (key) => ({ label: ACCURACY_SERIES[key], colour, dash: ACCURACY_DASHES[key] }),
    );
    const notes = [
      "Each client's test part is a seeded share of its own rows (data.testFraction); the pooled test set is their union. The worst client is the one with the lowest accuracy at that round.",
    ];
    if (curve.roundsShown < curve.roundsTotal)
      notes.push(
        `${curve.roundsShown} of ${curve.roundsTotal} evaluated rounds drawn, evenly spread.`,
      );
    parts.push(
      figure(
        await renderSvg(accuracyChartSpec(curve.rows, series), 'accuracy'),
        notes.join(' '),
        'Test accuracy against rounds: pooled, mean client and worst client',
      ),
    );
  }
  return [section('Held-out test set', parts)];
}

/** The whole report page; the same results give the same text. */
export async function buildRunReport(results: RunResults): Promise<string> {
  const s = results.summary;
  const header: Html[] = [
    heading(`roundwire report: ${results.scenarioName}`),
    ...(results.description ? [paragraph(results.description)] : []),
    paragraph(
      `${s.method}, ${s.clients} clients, ${s.rounds} rounds (${s.stopReason}), ${s.runtime} runtime, ${s.clock} clock, step size ${formatNumber(s.stepSize)}; plan ${s.planHash}.`,
      'note',
    ),
    paragraph(
      s.roundsToTarget === null
        ? `Target ${formatNumber(s.target)}: not reached.`
        : `Target ${formatNumber(s.target)}: reached at round ${s.roundsToTarget}.`,
      'verdict',
    ),
  ];
  return page(`roundwire report: ${results.scenarioName}`, [
    ...header,
    section('Summary: measured beside predicted', [
      table(['quantity', 'measured', 'predicted'], summaryRows(s), formatNumber),
    ]),
    section('Rate: measured, predicted and published bounds', [
      table(RATE_COMPARISON_HEADER, rateComparisonRows(s), formatNumber),
      paragraph(
        'A bound holds for every function of its class; the exact prediction is for this problem and plan, so a bound that applies lies at or above it.',
        'note',
      ),
    ]),
    section('Convergence', [grid(await curveFigures(results))]),
    ...(await heldOutSection(results)),
    section('Traffic and time', [
      grid([
        await bytesFigure(results),
        await timelineFigure(results),
        await histogramFigure(results),
      ]),
    ]),
  ]);
}
