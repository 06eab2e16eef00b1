// The verdict over repeats: for a figure, the variant with the least mean among those that have
// the figure in every repeat, and whether it beats the runner-up at the stated confidence. The
// test is paired: repeat r of both variants ran with the same seeds, so the differences
// d_r = runner-up_r - leader_r carry the comparison, and the paired t-interval of their mean
// decides it. An interval entirely above 0 is a clear winner; one that contains 0 (or reaches
// below it) is "no clear winner".

import { meanOf, tInterval, type FigureStatistics } from './repeat-statistics.js';
import type { RepeatFigure } from './repeat-figures.js';

export interface FigureSeries {
  variant: string;
  /** one value a repeat, in repeat order; null where it is missing */
  values: readonly (number | null)[];
  statistics: FigureStatistics;
}

export type VerdictDecision =
  /** the leader's advantage has an interval above 0 */
  | 'clear-winner'
  /** the interval of the difference contains 0 */
  | 'no-clear-winner'
  /** only one variant has the figure in every repeat */
  | 'only-one-ranked'
  /** no variant has the figure in every repeat */
  | 'none-ranked';

export interface PairedDifference {
  /** mean of runner-up minus leader over the repeats */
  mean: number;
  lower: number;
  upper: number;
  n: number;
  method: 'paired-t';
}

export interface FigureVerdict {
  figure: RepeatFigure;
  decision: VerdictDecision;
  leader: { variant: string; mean: number } | null;
  runnerUp: { variant: string; mean: number } | null;
  difference: PairedDifference | null;
  /** variants that have the figure in some repeats but not all, left out of the ranking */
  partial: string[];
}

/** The paired t-interval of the mean of `differences` (at least 2). */
export function pairedDifference(
  differences: readonly number[],
  confidence: number,
): PairedDifference {
  const [lower, upper] = tInterval(differences, confidence);
  return {
    mean: meanOf(differences),
    lower,
    upper,
    n: differences.length,
    method: 'paired-t',
  };
}

/** The verdict on one figure; ties in the mean go to the earlier variant. */
export function figureVerdict(
  figure: RepeatFigure,
  series: readonly FigureSeries[],
  confidence: number,
): FigureVerdict {
  const complete = series.filter((s) => s.statistics.missing === 0 && s.statistics.n > 0);
  const partial = series
    .filter((s) => s.statistics.missing > 0 && s.statistics.n > 0)
    .map((s) => s.variant);
  const ranked = complete
    .map((s, order) => ({ s, order }))
    .sort(
      (a, b) =>
        (a.s.statistics.mean as number) - (b.s.statistics.mean as number) || a.order - b.order,
    )
    .map((r) => r.s);
  const entry = (s: FigureSeries) => ({ variant: s.variant, mean: s.statistics.mean as number });
  if (ranked.length === 0)
    return {
      figure,
      decision: 'none-ranked',
      leader: null,
      runnerUp: null,
      difference: null,
      partial,
    };
  if (ranked.length === 1)
    return {
      figure,
      decision: 'only-one-ranked',
      leader: entry(ranked[0]),
      runnerUp: null,
      difference: null,
      partial,
    };
  const [leader, runnerUp] = ranked;
  const differences = leader.values.map((v, r) => (runnerUp.values[r] as number) - (v as number));
  const difference = pairedDifference(differences, confidence);
  return {
    figure,
    decision: difference.lower > 0 ? 'clear-winner' : 'no-clear-winner',
    leader: entry(leader),
    runnerUp: entry(runnerUp),
    difference,
    partial,
  };
}
