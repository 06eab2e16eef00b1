// The end of a run, whichever runtime ran it: the prediction, outcome.json and the rest of the
// results folder, and the final table a person reads.

import { gapName } from '../report/gap-name.js';
import type { Scenario } from '../scenario/schema.js';
import type { RoundRecord } from '../engine/round-record.js';
import type { RunOutcome, RunSummary } from '../engine/run-summary.js';
import { buildRunSummary, curveOf } from '../engine/run-summary.js';
import { roundsAreRandom } from '../engine/monte-carlo-band.js';
import { predictRandomBand } from '../engine/random-band.js';
import { formatBandLine } from '../report/band-text.js';
import { predictRun } from '../engine/predict-run.js';
import { runInProcess } from '../engine/in-process-engine.js';
import { writeResultsFolder } from '../results/results-folder.js';
import { DeferredRecordStream } from '../results/record-stream.js';
import { readRoundRecords } from '../results/record-lines.js';
import { formatNumber, formatTable } from '../report/text-table.js';
import { RATE_COMPARISON_HEADER, rateComparisonRows } from '../report/rate-comparison.js';
import { formatBytes } from './progress.js';

/**
 * Completes the results folder of a run whose records are already in outDir's rounds.jsonl and
 * clients.jsonl: outcome.json (from the rounds read back from the file), the resolved scenario
 * and the model.
 */
export function finishRun(
  outcome: RunOutcome,
  runtime: RunSummary['runtime'],
  outDir: string,
): RunSummary {
  const prediction = predictRun(outcome.plan, outcome.theory);
  const measured = buildRunSummary(outcome, readRoundRecords(outDir), prediction, runtime);
  // Random rounds: the band costs its replicas' ideal runs, once, at the end.
  const summary = roundsAreRandom(outcome.plan.scenario)
    ? {
        ...measured,
        band: predictRandomBand(outcome.plan, outcome.theory, curveOf(readRoundRecords(outDir))),
      }
    : measured;
  writeResultsFolder(outDir, {
    scenario: outcome.plan.scenario,
    outcome: summary,
    finalModel: outcome.finalModel,
  });
  return summary;
}

/** Runs `scenario` in process, its records streamed into outDir as they happen; then finishRun. */
export function runInProcessInto(
  scenario: Scenario,
  outDir: string,
  onRound?: (record: RoundRecord) => void,
): { outcome: RunOutcome; summary: RunSummary } {
  const records = new DeferredRecordStream(outDir);
  let outcome: RunOutcome;
  try {
    outcome = runInProcess(scenario, { onRound, openRecords: () => records.open() });
  } finally {
    records.close();
  }
  return { outcome, summary: finishRun(outcome, 'in-process', outDir) };
}

/** The row of the rate over the asymptotic window: measured beside the predicted trajectory's. */
function windowRows(s: RunSummary): (string | number | null)[][] {
  const a = s.rate.asymptotic;
  if (a.window === null) return [];
  return [
    [`rate over rounds ${a.window[0]}-${a.window[1]}`, null, a.measured, a.predictedOverWindow],
  ];
}

/** The window's status, and the measured rate's standard error where there is a fit. */
function windowLine(a: RunSummary['rate']['asymptotic']): string {
  if (a.measuredStandardError === null) return a.note;
  return `${a.note}; measured rate standard error ${formatNumber(a.measuredStandardError)}`;
}

/** The held-out scores at the last evaluated round and the target accuracy; none without a test part. */
function heldOutLines(heldOut: RunSummary['heldOut']): string[] {
  if (heldOut === undefined) return [];
  const { final } = heldOut;
  const c = final.clientAccuracy;
  const lines = [
    `test loss ${formatNumber(final.loss)}` +
      (final.accuracy === null ? '' : `; test accuracy ${formatNumber(final.accuracy)} pooled`) +
      (c === null
        ? ''
        : `, clients: mean ${formatNumber(c.mean)}, worst ${formatNumber(c.worst)} (client ${c.worstClientId}), range ${formatNumber(c.range)}`),
  ];
  if (heldOut.targetAccuracy !== null)
    lines.push(
      `target test accuracy ${heldOut.targetAccuracy}: ${heldOut.roundsToTargetAccuracy === null ? 'not reached' : `reached at round ${heldOut.roundsToTargetAccuracy}, ${formatBytes(heldOut.toTargetAccuracy.payloadBytes ?? 0)} payload`}`,
    );
  return lines;
}

export function formatRunSummary(s: RunSummary, outDir: string): string {
  const rows: (string | number | null)[][] = [
    [gapName(s.theory.reference !== null), s.suboptimality.initial, s.suboptimality.final, null],
    [
      s.prediction.kind === 'local'
        ? 'rate per round, straight fit (predicted: local, near the limit)'
        : 'rate per round, straight fit',
      null,
      s.rate.measured,
      s.rate.predicted,
    ],
    ...windowRows(s),
    ['floor f(limit) - f*', null, s.floor.measured, s.floor.predicted],
  ];
  const table = formatTable(['quantity', 'initial', 'measured', 'predicted'], rows);
  const rates = formatTable([...RATE_COMPARISON_HEADER], rateComparisonRows(s));
  const bytes = (b: { up: number; down: number }) =>
    `${formatBytes(b.up)} up, ${formatBytes(b.down)} down`;
  const lines = [
    `${s.scenario}: ${s.method}, ${s.rounds} rounds (${s.stopReason}), ${s.clients} clients, step size ${s.stepSize.toPrecision(4)}`,
    '',
    table,
    '',
    rates,
    '',
    `target ${s.target}: ${s.roundsToTarget === null ? 'not reached' : `reached at round ${s.roundsToTarget}, ${formatBytes(s.toTarget.payloadBytes ?? 0)} payload`}`,
    ...heldOutLines(s.heldOut),
    `payload bytes: ${bytes(s.bytes.payload)}${s.bytes.wire ? `; wire: ${bytes(s.bytes.wire)}` : ''}`,
    `seconds: ${s.seconds.virtual.toPrecision(4)} modelled, ${s.seconds.wall.toFixed(2)} wall; dropped updates ${s.droppedUpdates}`,
    `rate window: ${windowLine(s.rate.asymptotic)}`,
    s.prediction.available
      ? `prediction: spectral radius ${s.prediction.spectralRadius?.toPrecision(6)}, next eigenvalue modulus ${formatNumber(s.prediction.subdominantModulus)} (Ritz residual ${formatNumber(s.prediction.subdominantRelativeResidual)} relative to rho)${s.prediction.kind === 'local' ? '; local: the round map linearized at its limit, the rate holds once the run is near the limit' : ''}`
      : `prediction: none (${s.prediction.reason})`,
    ...(s.band === undefined ? [] : [formatBandLine(s.band)]),
    `results: ${outDir}`,
  ];
  return `${lines.join('\n')}\n`;
}
