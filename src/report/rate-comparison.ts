// The per-round rate of f - f* three ways, each with where it comes from: measured on this run,
// predicted exactly from the round map, and bounded by published theorems. One set of rows for
// the terminal summary and the report page, so that both say the same.

import type { RunSummary } from '../engine/run-summary.js';
import type { PublishedBound } from '../theory/published-bounds.js';

export const RATE_COMPARISON_HEADER = ['rate', 'per round of f - f*', 'source'] as const;

export type RateComparisonRow = [string, number | null, string];

function boundNote(b: PublishedBound): string {
  if (b.status !== 'applies') return `${b.reason ?? b.status}; ${b.source}`;
  const sense =
    b.quantity === 'f - f*'
      ? 'on f - f*, every round'
      : `on ${b.quantity}, as an asymptotic rate of f - f* (L/mu factor)`;
  return `${b.source}; ${sense}`;
}

/** One row per published entry: "bound: ..." with its value where it applies, else why not. */
export function boundRows(bounds: readonly PublishedBound[]): RateComparisonRow[] {
  return bounds.map((b) => [
    `${b.status === 'applies' || b.status === 'does-not-apply' ? 'bound' : 'no bound'}: ${b.label}`,
    b.status === 'applies' ? b.suboptimalityRatePerRound : null,
    boundNote(b),
  ]);
}

/** Measured, predicted and every bound, each labelled with its source. */
export function rateComparisonRows(s: RunSummary): RateComparisonRow[] {
  const window = s.rate.measuredWindow;
  return [
    [
      'measured',
      s.rate.measured,
      window === null
        ? 'no clean stretch of log(f - f*) to fit in this run'
        : `fitted slope of log(f - f*) over rounds ${window[0]} to ${window[1]} of this run`,
    ],
    [
      s.prediction.kind === 'local' ? 'predicted (local)' : 'predicted (exact)',
      s.rate.predicted,
      !s.prediction.available
        ? `none: ${s.prediction.reason ?? 'not solved'}`
        : s.prediction.kind === 'local'
          ? "spectral radius of the ideal round map's Jacobian at its limit (squared when the limit is x*): holds near the limit"
          : 'spectral radius of the ideal round map (squared when its limit is x*)',
    ],
    ...boundRows(s.bounds),
  ];
}
