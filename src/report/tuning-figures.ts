// The figures a tuning search ranks its candidates by, one entry each in one table, and the order
// that ranks them. A candidate that reaches the target ranks by its figure; one that does not
// ranks after every one that does, by its final f - f*; a diverged one ranks last. The held-out
// figures (final test accuracy, rounds to run.targetAccuracy) need a scenario that holds out a
// test part of a classifier's rows.

import type { RoundRecord } from '../engine/round-record.js';
import type { StopReason } from '../engine/run-summary.js';

/** What a tuning search reads from one candidate run's rounds. */
export interface CandidateMeasure {
  stopReason: StopReason;
  /** the last round run */
  rounds: number;
  /** the last finite evaluated f - f*; NaN when the run diverged before any */
  finalSuboptimality: number;
  roundsToTarget: number | null;
  /** payload bytes up and down through the round that reached the target */
  bytesToTarget: number | null;
  /** modelled seconds (virtual clock) at the round that reached the target */
  secondsToTarget: number | null;
  /** the pooled test accuracy of the last evaluated round that scored one; null without */
  finalTestAccuracy: number | null;
  /** the first round whose pooled test accuracy reached run.targetAccuracy */
  roundsToTargetAccuracy: number | null;
}

/** What a figure needs of the scenario before it means anything. */
export type FigureNeed = 'target' | 'heldOutAccuracy' | 'targetAccuracy' | null;

export interface TuningFigure {
  /** e.g. "rounds to target" */
  title: string;
  unit: string;
  /**
   * target: run.target > 0; heldOutAccuracy: a classifier with data.testFraction > 0;
   * targetAccuracy: run.targetAccuracy set
   */
  needs: FigureNeed;
  /** which way is better; a figure such as accuracy is 'higher' */
  better: 'lower' | 'higher';
  /** the figure of a run; null where the run has none (it did not reach the target) */
  valueOf: (m: CandidateMeasure) => number | null;
}

export const TUNING_FIGURES = {
  'rounds-to-target': {
    title: 'rounds to target',
    unit: 'rounds',
    needs: 'target',
    better: 'lower',
    valueOf: (m) => m.roundsToTarget,
  },
  'bytes-to-target': {
    title: 'bytes to target',
    unit: 'bytes',
    needs: 'target',
    better: 'lower',
    valueOf: (m) => m.bytesToTarget,
  },
  'seconds-to-target': {
    title: 'modelled seconds to target',
    unit: 's',
    needs: 'target',
    better: 'lower',
    valueOf: (m) => m.secondsToTarget,
  },
  'final-suboptimality': {
    title: 'final f - f*',
    unit: '',
    needs: null,
    better: 'lower',
    valueOf: (m) => (Number.isFinite(m.finalSuboptimality) ? m.finalSuboptimality : null),
  },
  'final-test-accuracy': {
    title: 'final held-out accuracy',
    unit: '',
    needs: 'heldOutAccuracy',
    better: 'higher',
    valueOf: (m) => m.finalTestAccuracy,
  },
  'rounds-to-target-accuracy': {
    title: 'rounds to target accuracy',
    unit: 'rounds',
    needs: 'targetAccuracy',
    better: 'lower',
    valueOf: (m) => m.roundsToTargetAccuracy,
  },
} as const satisfies Record<string, TuningFigure>;

export type TuningFigureName = keyof typeof TUNING_FIGURES;

export const TUNING_FIGURE_NAMES = Object.keys(TUNING_FIGURES) as TuningFigureName[];

export function isTuningFigureName(name: string): name is TuningFigureName {
  return Object.hasOwn(TUNING_FIGURES, name);
}

export function isDiverged(m: CandidateMeasure): boolean {
  return m.stopReason === 'diverged' || !Number.isFinite(m.finalSuboptimality);
}

/** The measure of a run from its rounds (round 0 first), on the definitions outcome.json uses. */
export function measureRounds(
  rounds: readonly RoundRecord[],
  stopReason: StopReason,
  target: number,
  targetAccuracy?: number,
): CandidateMeasure {
  let finalSuboptimality = Number.NaN;
  let finalTestAccuracy: number | null = null;
  let roundsToTargetAccuracy: number | null = null;
  let payloadBytes = 0;
  let reached: { record: RoundRecord; payloadBytes: number } | null = null;
  for (const r of rounds) {
    payloadBytes += r.bytes.payload.up + r.bytes.payload.down;
    const accuracy = r.heldOut?.accuracy;
    if (typeof accuracy === 'number' && Number.isFinite(accuracy)) {
      finalTestAccuracy = accuracy;
      if (
        roundsToTargetAccuracy === null &&
        targetAccuracy !== undefined &&
        accuracy >= targetAccuracy
      )
        roundsToTargetAccuracy = r.round;
    }
    if (r.suboptimality === null || !Number.isFinite(r.suboptimality)) continue;
    finalSuboptimality = r.suboptimality;
    if (reached === null && target > 0 && r.suboptimality <= target)
      reached = { record: r, payloadBytes };
  }
  return {
    stopReason,
    rounds: rounds.length === 0 ? 0 : rounds[rounds.length - 1].round,
    finalSuboptimality,
    roundsToTarget: reached === null ? null : reached.record.round,
    bytesToTarget: reached === null ? null : reached.payloadBytes,
    secondsToTarget: reached === null ? null : reached.record.virtualSeconds,
    finalTestAccuracy,
    roundsToTargetAccuracy,
  };
}

/** 0: has the figure; 1: finite without it (did not reach the target); 2: diverged. */
function standing(figure: TuningFigure, m: CandidateMeasure): 0 | 1 | 2 {
  if (isDiverged(m)) return 2;
  return figure.valueOf(m) === null ? 1 : 0;
}

/**
 * Negative when `a` ranks before `b`: by standing, then by the figure (its own direction), then
 * by final f - f*, lower first (it breaks ties of a whole-number figure such as rounds).
 */
export function compareMeasures(
  figure: TuningFigure,
  a: CandidateMeasure,
  b: CandidateMeasure,
): number {
  const sa = standing(figure, a);
  const sb = standing(figure, b);
  if (sa !== sb) return sa - sb;
  if (sa === 2) return 0;
  if (sa === 0) {
    const va = figure.valueOf(a) as number;
    const vb = figure.valueOf(b) as number;
    if (va !== vb) return figure.better === 'lower' ? va - vb : vb - va;
  }
  return a.finalSuboptimality - b.finalSuboptimality;
}
