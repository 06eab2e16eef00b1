// A comparison's repeats gathered: every run's figures, each variant's statistics per figure and
// the paired verdict per ranked figure. compare.json carries all of it.

import { BOOTSTRAP_RULE, figureStatistics, type FigureStatistics } from './repeat-statistics.js';
import { REPEAT_FIGURES, type RepeatFigure, type RunFigures } from './repeat-figures.js';
import { figureVerdict, type FigureVerdict } from './repeat-verdict.js';

export interface RepeatRun {
  /** 1-based */
  repeat: number;
  seed: number;
  dataSeed: number;
  /** the run's stop reason, or "failed" when it ended in an error */
  stop: string;
  /** the error's message of a failed run */
  failure: string | null;
  /** the run's results folder, beside compare.json */
  folder: string;
  figures: RunFigures;
}

export interface RepeatedVariant {
  variant: string;
  runs: RepeatRun[];
  diverged: number;
  failed: number;
  figures: Record<RepeatFigure, FigureStatistics>;
}

export interface RepeatSummary {
  count: number;
  redrawData: boolean;
  confidence: number;
  /** how each interval was chosen, in words */
  intervalRule: string;
  /** the figures the tables show: the accuracy ones only where a target accuracy is named */
  figures: RepeatFigure[];
  variants: RepeatedVariant[];
  verdict: FigureVerdict[];
}

export const INTERVAL_RULE = `Student t-interval of the mean; a percentile bootstrap interval instead when a figure has at least ${BOOTSTRAP_RULE.samplesMin} values and a sample skewness beyond ${BOOTSTRAP_RULE.skewnessMin} in magnitude. The verdict: paired t-interval of the runner-up's minus the leader's value over the same seeds.`;

function repeatedVariant(variant: string, runs: RepeatRun[], confidence: number): RepeatedVariant {
  const figures = {} as Record<RepeatFigure, FigureStatistics>;
  for (const figure of REPEAT_FIGURES)
    figures[figure] = figureStatistics(
      runs.map((r) => r.figures[figure]),
      confidence,
    );
  return {
    variant,
    runs,
    diverged: runs.filter((r) => r.stop === 'diverged').length,
    failed: runs.filter((r) => r.stop === 'failed').length,
    figures,
  };
}

export function summarizeRepeats(
  runsByVariant: readonly { variant: string; runs: RepeatRun[] }[],
  options: { count: number; redrawData: boolean; confidence: number },
  verdictFigures: readonly RepeatFigure[],
  figures: RepeatFigure[] = [...REPEAT_FIGURES],
): RepeatSummary {
  const variants = runsByVariant.map((v) => repeatedVariant(v.variant, v.runs, options.confidence));
  const verdict = verdictFigures.map((figure) =>
    figureVerdict(
      figure,
      variants.map((v) => ({
        variant: v.variant,
        values: v.runs.map((r) => r.figures[figure]),
        statistics: v.figures[figure],
      })),
      options.confidence,
    ),
  );
  return { ...options, intervalRule: INTERVAL_RULE, figures, variants, verdict };
}
