// The comparison's numbers: one row per variant (with the rounds, bytes and seconds to the f - f*
// target and, where the runs hold out a test part, to run.targetAccuracy), the verdict (which variant needed the fewest
// bytes and the least time to reach the target, and by how much over the runner-up), and the
// same rows as a text table, CSV (RFC 4180) and JSON. The CSV columns, the JSON keys and the
// table's headings are one list, so that the three always agree.

import type { RoundRecord } from '../engine/round-record.js';
import type { RunSummary } from '../engine/run-summary.js';
import { columnTitle, formatNumber, formatTable, type Column } from './text-table.js';
import type { Variant } from './compare-variants.js';
import type { Ladder } from './ladder.js';
import { tuningLine, type ComparisonTuning } from './tuning-trace.js';

export interface CompareRow {
  variant: string;
  stop: string;
  rounds: number;
  roundsToTarget: number | null;
  /** payload bytes up and down, through the round that reached the target */
  bytesToTarget: number | null;
  /** payload bytes up only, through the round that reached the target */
  uplinkBytesToTarget: number | null;
  /** modelled seconds when every variant ran on the virtual clock, wall seconds otherwise */
  secondsToTarget: number | null;
  /** the first round whose pooled test accuracy reached run.targetAccuracy (null: not reached or none set) */
  roundsToTargetAccuracy: number | null;
  /** payload bytes up and down, through that round */
  bytesToTargetAccuracy: number | null;
  /** on the comparison's time basis, like secondsToTarget */
  secondsToTargetAccuracy: number | null;
  floorMeasured: number | null;
  rateMeasured: number | null;
  ratePredicted: number | null;
  /** the measured rate over the asymptotic window (outcome.json's rate.asymptotic) and its status */
  rateOverWindow: number | null;
  windowStatus: string;
  droppedUpdates: number;
  /** the variant's results folder, beside compare.json */
  folder: string;
  /** the value of the tuned field this variant ran at; null without tuning */
  tunedValue: number | null;
}

/** CSV columns and JSON keys, in order; the table shows all but the folder. */
export const compareColumns: (keyof CompareRow)[] = [
  'variant',
  'stop',
  'rounds',
  'roundsToTarget',
  'bytesToTarget',
  'uplinkBytesToTarget',
  'secondsToTarget',
  'roundsToTargetAccuracy',
  'bytesToTargetAccuracy',
  'secondsToTargetAccuracy',
  'floorMeasured',
  'rateMeasured',
  'ratePredicted',
  'rateOverWindow',
  'windowStatus',
  'droppedUpdates',
  'folder',
  'tunedValue',
];

const tableKeys = compareColumns.filter((k) => k !== 'folder');

/** Units shown in the printed and HTML table's header; bytes there are in kB (1000 bytes). */
const COLUMN_UNITS: Partial<Record<keyof CompareRow, string>> = {
  roundsToTarget: 'rounds',
  bytesToTarget: 'kB',
  uplinkBytesToTarget: 'kB',
  secondsToTarget: 's',
  roundsToTargetAccuracy: 'rounds',
  bytesToTargetAccuracy: 'kB',
  secondsToTargetAccuracy: 's',
  droppedUpdates: 'updates',
};

/** A column's heading in the table: its key in words ("bytesToTarget" -> "bytes to target"). */
export function columnHeading(key: keyof CompareRow): string {
  return key.replace(/[A-Z]/g, (c) => ` ${c.toLowerCase()}`);
}

/** The columns of the printed and the HTML table; seconds are on the comparison's time basis. */
export const tableColumns: Column[] = tableKeys.map((k) => ({
  name: columnHeading(k),
  unit: COLUMN_UNITS[k],
}));

export type TimeBasis = 'modelled' | 'wall';

export interface Ranking {
  /** the least value among the variants that reached the target; ties go to the earlier variant */
  variant: string;
  value: number;
  /** the next least; null when only one variant reached the target */
  runnerUp: { variant: string; value: number } | null;
  /** how much more the runner-up needed (runner-up's value minus the leader's) */
  margin: number | null;
  /** the runner-up's value over the leader's; null without a runner-up or when the leader's is 0 */
  ratio: number | null;
}

export interface Verdict {
  /** how many variants reached the target */
  reachedTarget: number;
  fewestBytesToTarget: Ranking | null;
  fewestUplinkBytesToTarget: Ranking | null;
  leastTimeToTarget: Ranking | null;
}

export interface Comparison {
  scenario: string;
  target: number;
  /** run.targetAccuracy of the runs (the first variant's that has one); null when none sets it */
  targetAccuracy: number | null;
  runtime: RunSummary['runtime'];
  timeBasis: TimeBasis;
  ladders: Ladder[];
  variants: CompareRow[];
  verdict: Verdict;
  /** present when each variant ran at its own tuned value (tuning.json holds the trace) */
  tuning?: ComparisonTuning;
}

export interface VariantOutcome {
  variant: Variant;
  /** null when the run ended in an error instead of a stop reason */
  summary: RunSummary | null;
  rounds: readonly RoundRecord[];
  /** the error's message of a failed run */
  failure?: string;
  /** the tuned field's value this variant ran at, when the comparison tuned one */
  tunedValue?: number;
}

/** The stop shown for a run that ended in an error. */
export const FAILED_STOP = 'failed';

/** Modelled seconds compare like with like only when every variant ran on the virtual clock. */
export function timeBasisOf(summaries: readonly RunSummary[]): TimeBasis {
  return summaries.every((s) => s.clock === 'virtual') ? 'modelled' : 'wall';
}

/** A failed run's row: its stop says so and it has no figures. */
function failedRow(variant: Variant, tunedValue: number | null): CompareRow {
  return {
    variant: variant.label,
    stop: FAILED_STOP,
    rounds: 0,
    roundsToTarget: null,
    bytesToTarget: null,
    uplinkBytesToTarget: null,
    secondsToTarget: null,
    roundsToTargetAccuracy: null,
    bytesToTargetAccuracy: null,
    secondsToTargetAccuracy: null,
    floorMeasured: null,
    rateMeasured: null,
    ratePredicted: null,
    rateOverWindow: null,
    windowStatus: FAILED_STOP,
    droppedUpdates: 0,
    folder: variant.folderName,
    tunedValue,
  };
}

export function compareRow(outcome: VariantOutcome, timeBasis: TimeBasis): CompareRow {
  const { summary: s, variant } = outcome;
  if (s === null) return failedRow(variant, outcome.tunedValue ?? null);
  const held = s.heldOut;
  let uplink: number | null = null;
  if (s.roundsToTarget !== null) {
    uplink = 0;
    for (const r of outcome.rounds) if (r.round <= s.roundsToTarget) uplink += r.bytes.payload.up;
  }
  return {
    variant: variant.label,
    stop: s.stopReason,
    rounds: s.rounds,
    roundsToTarget: s.roundsToTarget,
    bytesToTarget: s.toTarget.payloadBytes,
    uplinkBytesToTarget: uplink,
    secondsToTarget: timeBasis === 'modelled' ? s.toTarget.virtualSeconds : s.toTarget.wallSeconds,
    roundsToTargetAccuracy: held?.roundsToTargetAccuracy ?? null,
    bytesToTargetAccuracy: held?.toTargetAccuracy.payloadBytes ?? null,
    secondsToTargetAccuracy:
      (timeBasis === 'modelled'
        ? held?.toTargetAccuracy.virtualSeconds
        : held?.toTargetAccuracy.wallSeconds) ?? null,
    floorMeasured: s.floor.measured,
    rateMeasured: s.rate.measured,
    ratePredicted: s.rate.predicted,
    rateOverWindow: s.rate.asymptotic.measured,
    windowStatus: s.rate.asymptotic.status,
    droppedUpdates: s.droppedUpdates,
    folder: variant.folderName,
    tunedValue: outcome.tunedValue ?? null,
  };
}

/** The least and the next least value among rows that reached the target; ties keep row order. */
export function rankLeast(
  rows: readonly CompareRow[],
  key: 'bytesToTarget' | 'uplinkBytesToTarget' | 'secondsToTarget',
): Ranking | null {
  const reached = rows
    .filter((r) => r.roundsToTarget !== null && r[key] !== null)
    .map((r) => ({ variant: r.variant, value: r[key] as number }));
  const sorted = reached
    .map((entry, order) => ({ entry, order }))
    .sort((a, b) => a.entry.value - b.entry.value || a.order - b.order)
    .map((s) => s.entry);
  if (sorted.length === 0) return null;
  const [leader, runnerUp] = sorted;
  if (runnerUp === undefined) return { ...leader, runnerUp: null, margin: null, ratio: null };
  return {
    ...leader,
    runnerUp,
    margin: runnerUp.value - leader.value,
    ratio: leader.value > 0 ? runnerUp.value / leader.value : null,
  };
}

export function buildComparison(
  scenario: string,
  target: number,
  ladders: Ladder[],
  outcomes: readonly VariantOutcome[],
): Comparison {
  const summaries = outcomes.flatMap((o) => (o.summary === null ? [] : [o.summary]));
  const timeBasis = timeBasisOf(summaries);
  const rows = outcomes.map((o) => compareRow(o, timeBasis));
  return {
    scenario,
    target,
    targetAccuracy:
      summaries.find((s) => s.heldOut?.targetAccuracy != null)?.heldOut?.targetAccuracy ?? null,
    runtime: summaries.every((s) => s.runtime === 'in-process') ? 'in-process' : 'distributed',
    timeBasis,
    ladders,
    variants: rows,
    verdict: {
      reachedTarget: rows.filter((r) => r.roundsToTarget !== null).length,
      fewestBytesToTarget: rankLeast(rows, 'bytesToTarget'),
      fewestUplinkBytesToTarget: rankLeast(rows, 'uplinkBytesToTarget'),
      leastTimeToTarget: rankLeast(rows, 'secondsToTarget'),
    },
  };
}

export const tableHeader = tableColumns.map(columnTitle);

const bytesPerKilobyte = 1000;
const KILOBYTE_KEYS = new Set<keyof CompareRow>([
  'bytesToTarget',
  'uplinkBytesToTarget',
  'bytesToTargetAccuracy',
]);

export function tableRows(c: Comparison): (string | number | null)[][] {
  return c.variants.map((r) =>
    tableKeys.map((k) => {
      const v = r[k];
      return KILOBYTE_KEYS.has(k) && typeof v === 'number' ? v / bytesPerKilobyte : v;
    }),
  );
}

function formatRatio(ratio: number): string {
  return ratio >= 100 ? ratio.toFixed(0) : ratio.toPrecision(3);
}

/** One verdict line: the leader, its value, and how far ahead of the runner-up it is. */
function rankingLine(
  title: string,
  r: Ranking,
  unit: string,
  fewer: string,
  times: string,
): string {
  const value = `${formatNumber(r.value)} ${unit}`;
  if (r.runnerUp === null)
    return `${title}: ${r.variant} (${value}; the only variant that reached the target)`;
  if (r.margin === 0)
    return `${title}: ${r.variant} (${value}; tied with runner-up ${r.runnerUp.variant})`;
  const ratio = r.ratio === null ? '' : `, which needs ${formatRatio(r.ratio)} times ${times}`;
  return `${title}: ${r.variant} (${value}; ${formatNumber(r.margin)} ${unit} ${fewer} than runner-up ${r.runnerUp.variant}${ratio})`;
}

/** How many variants reached the target accuracy; nothing when the runs set none. */
function accuracyLines(c: Comparison): string[] {
  if (c.targetAccuracy === null) return [];
  const reached = c.variants.filter((r) => r.roundsToTargetAccuracy !== null).length;
  return [
    `${reached} of ${c.variants.length} variants reached the test accuracy ${formatNumber(c.targetAccuracy)} (see the columns "to target accuracy")`,
  ];
}

/** The verdict in words: how many reached the target and, among them, who needed the least. */
export function verdictLines(c: Comparison): string[] {
  const v = c.verdict;
  const target = `the target f - f* <= ${formatNumber(c.target)}`;
  if (v.reachedTarget === 0)
    return [
      `no variant reached ${target} within its rounds, so none is ranked`,
      ...accuracyLines(c),
    ];
  const lines = [`${v.reachedTarget} of ${c.variants.length} variants reached ${target}`];
  if (v.fewestBytesToTarget !== null)
    lines.push(
      rankingLine('fewest bytes to target', v.fewestBytesToTarget, 'bytes', 'fewer', 'as many'),
    );
  if (v.fewestUplinkBytesToTarget !== null)
    lines.push(
      rankingLine(
        'fewest uplink bytes to target',
        v.fewestUplinkBytesToTarget,
        'bytes',
        'fewer',
        'as many',
      ),
    );
  if (v.leastTimeToTarget !== null)
    lines.push(
      rankingLine(
        `least ${c.timeBasis} time to target`,
        v.leastTimeToTarget,
        's',
        'less',
        'as long',
      ),
    );
  return [...lines, ...accuracyLines(c)];
}

export function formatComparison(c: Comparison, outDir: string): string {
  const basis =
    c.timeBasis === 'modelled' ? 'seconds are modelled (virtual clock)' : 'seconds are wall-clock';
  return (
    [
      `${c.scenario}: ${c.variants.length} variants, ${c.runtime}, target ${formatNumber(c.target)}; bytes are payload bytes up and down; ${basis}`,
      '',
      formatTable(tableColumns, tableRows(c)),
      '',
      ...verdictLines(c),
      ...(c.tuning === undefined ? [] : [tuningLine(c.tuning)]),
      `results: ${outDir} (compare.html, compare.csv, compare.json, one folder per variant)`,
    ].join('\n') + '\n'
  );
}

function csvField(value: string | number | null): string {
  if (value === null) return '';
  const text = String(value);
  return /[",\r\n]/.test(text) ? `"${text.replace(/"/g, '""')}"` : text;
}

/** RFC 4180 CSV: CRLF line ends, fields quoted when they hold a comma, quote or line break. */
export function comparisonCsv(c: Comparison): string {
  const lines = [
    compareColumns.join(','),
    ...c.variants.map((r) => compareColumns.map((k) => csvField(r[k])).join(',')),
  ];
  return `${lines.join('\r\n')}\r\n`;
}

export function comparisonJson(c: Comparison): string {
  return `${JSON.stringify(c, null, 2)}\n`;
}
