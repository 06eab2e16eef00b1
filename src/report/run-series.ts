// The numbers a run's charts draw, derived from its records: the suboptimality curve against
// rounds, cumulative payload bytes and seconds, the predicted curve beside it, bytes per round by
// layer, the tau_i histogram and the per-client timeline. Every series is bounded.

import type { ClientRoundRecord, RoundRecord } from '../engine/round-record.js';
import type { RunSummary } from '../engine/run-summary.js';
import { thin } from '../base/thin.js';

export const SERIES_LIMITS = {
  /** points per curve */
  curvePointsMax: 2000,
  /** rounds shown in the bytes-per-round chart */
  bytesRoundsMax: 2000,
  /** clients shown in the timeline */
  timelineClientsMax: 64,
  /** rounds shown in the timeline (the last ones) */
  timelineRoundsMax: 10,
  /** bars of the tau_i histogram */
  histogramBinsMax: 40,
} as const;

export interface CurvePointRow {
  series: string;
  round: number;
  /** cumulative payload bytes (up and down) at the round's end */
  payloadBytes: number;
  /** modelled seconds for the virtual clock, wall seconds for the wall clock */
  seconds: number;
  suboptimality: number;
}

export interface MeasuredCurve {
  points: CurvePointRow[];
  /** evaluated rounds before thinning */
  pointsTotal: number;
  /** points left out because f - f* was zero or negative (no place on a log scale) */
  nonPositive: number;
  /** the run produced a non-finite value; the curve stops before it */
  diverged: boolean;
}

/** Which clock the seconds axis uses: modelled time when the clock is virtual, wall time otherwise. */
export function secondsOf(record: RoundRecord, clock: RunSummary['clock']): number {
  return clock === 'virtual' ? record.virtualSeconds : record.wallSeconds;
}

export function measuredCurve(
  rounds: readonly RoundRecord[],
  clock: RunSummary['clock'],
  series: string,
  pointsMax: number = SERIES_LIMITS.curvePointsMax,
): MeasuredCurve {
  const all: CurvePointRow[] = [];
  let cumulativeBytes = 0;
  let nonPositive = 0;
  let diverged = false;
  for (const r of rounds) {
    cumulativeBytes += r.bytes.payload.up + r.bytes.payload.down;
    if (r.suboptimality === null) continue;
    if (!Number.isFinite(r.suboptimality)) {
      diverged = true;
      break;
    }
    if (r.suboptimality <= 0) {
      nonPositive++;
      continue;
    }
    all.push({
      series,
      round: r.round,
      payloadBytes: cumulativeBytes,
      seconds: secondsOf(r, clock),
      suboptimality: r.suboptimality,
    });
  }
  return { points: thin(all, pointsMax), pointsTotal: all.length, nonPositive, diverged };
}

/**
 * The predicted trajectory (each record's predictedSuboptimality: the ideal round map iterated
 * from the run's x0) at the measured curve's rounds, so that it can be drawn against bytes and
 * seconds too; null when the run recorded none.
 */
export function predictedCurve(
  rounds: readonly RoundRecord[],
  measured: readonly CurvePointRow[],
  series: string,
): CurvePointRow[] | null {
  const predicted = new Map<number, number>();
  for (const r of rounds)
    if (r.predictedSuboptimality !== null) predicted.set(r.round, r.predictedSuboptimality);
  if (predicted.size === 0) return null;
  const rows: CurvePointRow[] = [];
  for (const p of measured) {
    const value = predicted.get(p.round);
    if (value !== undefined && Number.isFinite(value) && value > 0)
      rows.push({ ...p, series, suboptimality: value });
  }
  return rows;
}

const layerNames = ['payload', 'encoded', 'wire'] as const;

export type Layer = (typeof layerNames)[number];

export interface BytesRow {
  round: number;
  layer: Layer;
  direction: 'up' | 'down';
  bytes: number;
}

export interface BytesByLayer {
  rows: BytesRow[];
  layers: Layer[];
  roundsTotal: number;
}

export function bytesByLayer(
  rounds: readonly RoundRecord[],
  roundsMax: number = SERIES_LIMITS.bytesRoundsMax,
): BytesByLayer {
  // Round 0 is the evaluation of the starting point: nothing has crossed a link yet.
  const traffic = rounds.filter((r) => r.round > 0);
  const layers = layerNames.filter((layer) => traffic.some((r) => r.bytes[layer] !== undefined));
  const rows: BytesRow[] = [];
  for (const r of thin(traffic, roundsMax)) {
    for (const layer of layers) {
      const counts = r.bytes[layer];
      if (counts === undefined) continue;
      rows.push({ round: r.round, layer, direction: 'up', bytes: counts.up });
      rows.push({ round: r.round, layer, direction: 'down', bytes: counts.down });
    }
  }
  return { rows, layers: [...layers], roundsTotal: traffic.length };
}

export interface HistogramBar {
  label: string;
  /** lowest and highest tau in the bar */
  low: number;
  high: number;
  count: number;
}

/** Histogram of tau_i over every (client, round) pair: one bar a value, or equal-width bins. */
export function localStepsHistogram(
  rounds: readonly RoundRecord[],
  binsMax: number = SERIES_LIMITS.histogramBinsMax,
): HistogramBar[] {
  const counts = new Map<number, number>();
  for (const r of rounds)
    for (const steps of Object.values(r.localSteps))
      counts.set(steps, (counts.get(steps) ?? 0) + 1);
  if (counts.size === 0) return [];
  const values = [...counts.keys()].sort((a, b) => a - b);
  const min = values[0];
  const max = values[values.length - 1];
  if (max - min + 1 <= binsMax)
    return values.map((v) => ({ label: String(v), low: v, high: v, count: counts.get(v) ?? 0 }));
  const width = Math.ceil((max - min + 1) / binsMax);
  const bars: HistogramBar[] = [];
  for (let low = min; low <= max; low += width) {
    const high = Math.min(max, low + width - 1);
    let count = 0;
    for (const v of values) if (v >= low && v <= high) count += counts.get(v) ?? 0;
    bars.push({ label: `${low}-${high}`, low, high, count });
  }
  return bars;
}

export interface TimelineSegment {
  client: string;
  round: number;
  activity: 'compute' | 'transfer' | 'idle';
  /** seconds since the first shown round began */
  start: number;
  end: number;
}

export interface Timeline {
  segments: TimelineSegment[];
  clientsShown: number;
  clientsTotal: number;
  roundsShown: number[];
}

/**
 * The last rounds, client by client: within a round each exchange is laid end to end as compute,
 * transfer, then idle (waiting for the round to close). Modelled seconds: the records carry them
 * for both clocks. `clients` is read once, in file order, and only the records drawn are kept
 * (at most clientsMax clients over roundsMax rounds): clients.jsonl of any length fits.
 */
export function clientTimeline(
  rounds: readonly RoundRecord[],
  clients: Iterable<ClientRoundRecord>,
  roundsMax: number = SERIES_LIMITS.timelineRoundsMax,
  clientsMax: number = SERIES_LIMITS.timelineClientsMax,
): Timeline {
  const traffic = rounds.filter((r) => r.round > 0);
  const shownRounds = traffic.slice(-roundsMax);
  const roundStart = new Map<number, number>();
  const origin =
    shownRounds.length > 0 ? shownRounds[0].virtualSeconds - shownRounds[0].roundSeconds : 0;
  for (const r of shownRounds) roundStart.set(r.round, r.virtualSeconds - r.roundSeconds - origin);
  // The lowest clientsMax ids seen so far keep their records of the shown rounds; an id pushed
  // out by a lower one can never come back, so its records go.
  const allIds = new Set<number>();
  const kept = new Map<number, { order: number; record: ClientRoundRecord }[]>();
  let highestKept = -Infinity;
  let order = 0;
  for (const c of clients) {
    order++;
    allIds.add(c.clientId);
    if (!roundStart.has(c.round)) continue;
    let records = kept.get(c.clientId);
    if (records === undefined) {
      if (kept.size >= clientsMax) {
        if (c.clientId > highestKept) continue;
        kept.delete(highestKept);
      }
      records = [];
      kept.set(c.clientId, records);
      highestKept = Math.max(...kept.keys());
    }
    records.push({ order, record: c });
  }
  const drawn = [...kept.values()].flat().sort((a, b) => a.order - b.order);
  const cursor = new Map<string, number>();
  const segments: TimelineSegment[] = [];
  for (const { record: c } of drawn) {
    const client = `client ${c.clientId}`;
    const key = `${c.round}:${c.clientId}`;
    let t = cursor.get(key) ?? roundStart.get(c.round)!;
    for (const [activity, seconds] of [
      ['compute', c.computeSeconds],
      ['transfer', c.transferSeconds],
      ['idle', c.waitSeconds],
    ] as const) {
      if (!(seconds > 0)) continue;
      segments.push({ client, round: c.round, activity, start: t, end: t + seconds });
      t += seconds;
    }
    cursor.set(key, t);
  }
  return {
    segments,
    clientsShown: kept.size,
    clientsTotal: allIds.size,
    roundsShown: shownRounds.map((r) => r.round),
  };
}
