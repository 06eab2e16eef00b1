// The sentence that holds a run with random rounds against its band (outcome.json's `band`):
// the run's average f - f* over the stationary rounds beside the replicas' mean, its 95%
// interval, the 95% band of a single run, and the closed-form floor where there is one. The
// final table and report.html say it in the same words.

import type { RandomBand } from '../engine/random-band-schema.js';
import { formatNumber } from './text-table.js';

const range = ([low, high]: [number, number]) => `[${formatNumber(low)}, ${formatNumber(high)}]`;

/** Where the run's stationary average lies against the single-run band, or null when unknown. */
export function bandVerdict(band: RandomBand): 'inside' | 'above' | 'below' | null {
  const stationary = band.stationary;
  if (stationary === null || stationary.measured === null) return null;
  const [low, high] = stationary.singleRunInterval;
  if (stationary.measured < low) return 'below';
  if (stationary.measured > high) return 'above';
  return 'inside';
}

export function formatBandLine(band: RandomBand): string {
  const closed =
    band.closedForm.floor === null
      ? `no closed form (${band.closedForm.reason})`
      : `closed-form floor ${formatNumber(band.closedForm.floor)}`;
  const s = band.stationary;
  if (!band.available || s === null) return `band: none (${band.reason}); ${closed}`;
  const verdict = bandVerdict(band);
  const measured =
    s.measured === null
      ? 'the run evaluated no round there'
      : `measured ${formatNumber(s.measured)}, ${verdict} the single-run 95% band ${range(s.singleRunInterval)}`;
  return (
    `band over rounds ${s.window[0]}-${s.window[1]} (mean f - f*, ${band.replicas} replicas of the ideal run): ` +
    `${measured}; predicted mean ${formatNumber(s.mean)}, 95% t-interval ${range(s.meanInterval)}; ${closed}`
  );
}
