// The comparison's numbers: one row per variant, the cheapest and fastest variants among those
// that reached the target, and the same rows as a text table, CSV (RFC 4180) and JSON.

import type { RoundRecord } from '../engine/round-record.js';
import type { RunSummary } from '../engine/run-summary.js';
import { columnTitle, formatNumber, formatTable, type Column } from '../commands/text-table.js';
import type { Variant, VaryAxis } from './compare-variants.js';

export interface CompareRow {
  variant: string;
  folder: string;
  stopReason: string;
  rounds: number;
  roundsToTarget: number | null;
  /** payload bytes up and down, through the round that reached the target */
  payloadBytesToTarget: number | null;
  /** payload bytes up only, through the round that reached the target */
  uplinkPayloadBytesToTarget: number | null;
  /** modelled seconds when every variant ran on the virtual clock, wall seconds otherwise */
  secondsToTarget: number | null;
  floorMeasured: number | null;
  rateMeasured: number | null;
  ratePredicted: number | null;
  droppedUpdates: number;
}

export const compareColumns: (keyof CompareRow)[] = [
  'variant',
  'folder',
  'stopReason',
  'rounds',
  'roundsToTarget',
  'payloadBytesToTarget',
  'uplinkPayloadBytesToTarget',
  'secondsToTarget',
  'floorMeasured',
  'rateMeasured',
  'ratePredicted',
  'droppedUpdates',
];

export type TimeBasis = 'modelled' | 'wall';

export interface Pick {
  variant: string;
  value: number;
}

export interface Comparison {
  scenario: string;
  target: number;
  runtime: RunSummary['runtime'];
  timeBasis: TimeBasis;
  axes: VaryAxis[];
  rows: CompareRow[];
  cheapest: Pick | null;
  cheapestUplink: Pick | null;
  fastest: Pick | null;
}

export interface VariantOutcome {
  variant: Variant;
  summary: RunSummary;
  rounds: readonly RoundRecord[];
}

/** Modelled seconds compare like with like only when every variant ran on the virtual clock. */
export function timeBasisOf(summaries: readonly RunSummary[]): TimeBasis {
  return summaries.every((s) => s.clock === 'virtual') ? 'modelled' : 'wall';
}

export function compareRow(outcome: VariantOutcome, timeBasis: TimeBasis): CompareRow {
  const { summary: s, variant } = outcome;
  let uplink: number | null = null;
  if (s.roundsToTarget !== null) {
    uplink = 0;
    for (const r of outcome.rounds) if (r.round <= s.roundsToTarget) uplink += r.bytes.payload.up;
  }
  return {
    variant: variant.label,
    folder: variant.folderName,
    stopReason: s.stopReason,
    rounds: s.rounds,
    roundsToTarget: s.roundsToTarget,
    payloadBytesToTarget: s.toTarget.payloadBytes,
    uplinkPayloadBytesToTarget: uplink,
    secondsToTarget: timeBasis === 'modelled' ? s.toTarget.virtualSeconds : s.toTarget.wallSeconds,
    floorMeasured: s.floor.measured,
    rateMeasured: s.rate.measured,
    ratePredicted: s.rate.predicted,
    droppedUpdates: s.droppedUpdates,
  };
}

/** The row with the smallest value among rows that have one; ties go to the earlier variant. */
export function pickLeast(rows: readonly CompareRow[], key: 'payloadBytesToTarget' | 'uplinkPayloadBytesToTarget' | 'secondsToTarget'): Pick | null {
  let best: Pick | null = null;
  for (const r of rows) {
    const value = r[key];
    if (r.roundsToTarget === null || value === null) continue;
    if (best === null || value < best.value) best = { variant: r.variant, value };
  }
  return best;
}

export function buildComparison(scenario: string, target: number, axes: VaryAxis[], outcomes: readonly VariantOutcome[]): Comparison {
  const summaries = outcomes.map((o) => o.summary);
  const timeBasis = timeBasisOf(summaries);
  const rows = outcomes.map((o) => compareRow(o, timeBasis));
  return {
    scenario,
    target,
    runtime: summaries.every((s) => s.runtime === 'in-process') ? 'in-process' : 'distributed',
    timeBasis,
    axes,
    rows,
    cheapest: pickLeast(rows, 'payloadBytesToTarget'),
    cheapestUplink: pickLeast(rows, 'uplinkPayloadBytesToTarget'),
    fastest: pickLeast(rows, 'secondsToTarget'),
  };
}

/** The columns of the printed and the HTML table; seconds are on the comparison's time basis. */
export const tableColumns: Column[] = [
  { name: 'variant' },
  { name: 'stop' },
  { name: 'rounds' },
  { name: 'to target', unit: 'rounds' },
  { name: 'payload to target', unit: 'kB' },
  { name: 'uplink to target', unit: 'kB' },
  { name: 'time to target', unit: 's' },
  { name: 'floor measured' },
  { name: 'rate measured' },
  { name: 'rate predicted' },
  { name: 'dropped', unit: 'updates' },
];

export const tableHeader = tableColumns.map(columnTitle);

const bytesPerKilobyte = 1000;

function kilobytes(bytes: number | null): number | null {
  return bytes === null ? null : bytes / bytesPerKilobyte;
}

export function tableRows(c: Comparison): (string | number | null)[][] {
  return c.rows.map((r) => [r.variant, r.stopReason, r.rounds, r.roundsToTarget, kilobytes(r.payloadBytesToTarget), kilobytes(r.uplinkPayloadBytesToTarget), r.secondsToTarget, r.floorMeasured, r.rateMeasured, r.ratePredicted, r.droppedUpdates]);
}

/** The verdict lines: cheapest by bytes and fastest by time to target, or that none reached it. */
export function verdictLines(c: Comparison): string[] {
  if (c.cheapest === null) return [`none of the ${c.rows.length} variants reached the target ${formatNumber(c.target)}`];
  const lines = [`cheapest by payload bytes to target (up and down): ${c.cheapest.variant} (${c.cheapest.value} bytes)`];
  if (c.cheapestUplink !== null) lines.push(`cheapest by uplink payload bytes to target: ${c.cheapestUplink.variant} (${c.cheapestUplink.value} bytes)`);
  if (c.fastest !== null) lines.push(`fastest by ${c.timeBasis} seconds to target: ${c.fastest.variant} (${formatNumber(c.fastest.value)} s)`);
  return lines;
}

export function formatComparison(c: Comparison, outDir: string): string {
  const basis = c.timeBasis === 'modelled' ? 'seconds are modelled (virtual clock)' : 'seconds are wall-clock';
  return [
    `${c.scenario}: ${c.rows.length} variants, ${c.runtime}, target ${formatNumber(c.target)}; ${basis}`,
    '',
    formatTable(tableColumns, tableRows(c)),
    '',
    ...verdictLines(c),
    `results: ${outDir} (compare.html, compare.csv, compare.json, one folder per variant)`,
  ].join('\n') + '\n';
}

function csvField(value: string | number | null): string {
  if (value === null) return '';
  const text = String(value);
  return /[",\r\n]/.test(text) ? `"${text.replace(/"/g, '""')}"` : text;
}

/** RFC 4180 CSV: CRLF line ends, fields quoted when they hold a comma, quote or line break. */
export function comparisonCsv(c: Comparison): string {
  const lines = [compareColumns.join(','), ...c.rows.map((r) => compareColumns.map((k) => csvField(r[k])).join(','))];
  return `${lines.join('\r\n')}\r\n`;
}

export function comparisonJson(c: Comparison): string {
  return `${JSON.stringify(c, null, 2)}\n`;
}
