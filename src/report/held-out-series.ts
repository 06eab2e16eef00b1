// The held-out accuracy a run's report draws, from its records: the pooled test accuracy, the
// mean of the clients' own accuracies and the worst client's, against rounds. Bounded like
// every other series (run-series.ts).

import type { RoundRecord } from '../engine/round-record.js';
import { thin } from '../base/thin.js';
import { SERIES_LIMITS } from './run-series.js';

export const ACCURACY_SERIES = {
  pooled: 'pooled test set',
  mean: 'clients: mean',
  worst: 'clients: worst',
} as const;

export interface AccuracyRow {
  series: string;
  round: number;
  accuracy: number;
}

export interface AccuracyCurve {
  rows: AccuracyRow[];
  /** evaluated rounds with an accuracy, before thinning */
  roundsTotal: number;
  roundsShown: number;
}

/** The three accuracy series at every evaluated round (thinned evenly past the bound). */
export function accuracyCurve(
  rounds: readonly RoundRecord[],
  roundsMax: number = SERIES_LIMITS.curvePointsMax,
): AccuracyCurve {
  const scored = rounds.filter(
    (r) => r.heldOut?.accuracy !== null && r.heldOut?.accuracy !== undefined,
  );
  const shown = thin(scored, roundsMax);
  const rows: AccuracyRow[] = [];
  for (const r of shown) {
    const heldOut = r.heldOut!;
    rows.push({ series: ACCURACY_SERIES.pooled, round: r.round, accuracy: heldOut.accuracy! });
    if (heldOut.clientAccuracy !== null) {
      rows.push({
        series: ACCURACY_SERIES.mean,
        round: r.round,
        accuracy: heldOut.clientAccuracy.mean,
      });
      rows.push({
        series: ACCURACY_SERIES.worst,
        round: r.round,
        accuracy: heldOut.clientAccuracy.worst,
      });
    }
  }
  return { rows, roundsTotal: scored.length, roundsShown: shown.length };
}
