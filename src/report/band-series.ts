// outcome.json's `band` as the report draws and tabulates it: area rows for the rounds chart
// (both bands, points a log scale cannot show left out), the caption's sentence and the summary
// table's rows.

import type { RandomBand } from '../engine/random-band-schema.js';
import type { CurveBandRow } from './chart-specs.js';
import type { TableCell } from './html-page.js';
import { formatBandLine } from './band-text.js';

/** The band's rows, single-run band then the mean's interval; rows with a low end <= 0 are left out (log scale). */
export function bandRows(band: RandomBand): CurveBandRow[] {
  const rows: CurveBandRow[] = [];
  const add = (kind: CurveBandRow['kind'], lows: number[], highs: number[]) => {
    band.rounds.forEach((round, k) => {
      if (lows[k] > 0 && highs[k] >= lows[k])
        rows.push({ kind, round, low: lows[k], high: highs[k] });
    });
  };
  add('single-run', band.singleRunLow, band.singleRunHigh);
  add('mean', band.meanLow, band.meanHigh);
  return rows;
}

export function bandCaption(band: RandomBand): string {
  if (!band.available) return `No band is drawn: ${band.reason}.`;
  return (
    `Shaded, against rounds: the prediction for random rounds, from ${band.replicas} replicas of the ideal run (no compression, no drops, the run's tau_i, batch size and participation; seeds ${band.replicaSeeds}): ` +
    `light, where a single run is expected (2.5th to 97.5th percentile of the replicas); dark, the 95% t-interval of the mean. ` +
    `${formatBandLine(band)}.`
  );
}

/** Summary rows: the run's stationary average beside the predicted mean and the closed form. */
export function bandSummaryRows(band: RandomBand | undefined): TableCell[][] {
  if (band === undefined) return [];
  const rows: TableCell[][] = [];
  if (band.stationary !== null)
    rows.push([
      `mean f(x) - f*, rounds ${band.stationary.window[0]}-${band.stationary.window[1]} (Monte Carlo)`,
      band.stationary.measured,
      band.stationary.mean,
    ]);
  if (band.closedForm.floor !== null)
    rows.push(['stationary E[f(x) - f*] (closed form)', null, band.closedForm.floor]);
  return rows;
}
