// The figures a comparison summarizes over repeats, one value a run, and their names on the
// command line (`--rank-by bytes-to-target`). Every figure is better when smaller.

import { ReportError } from './report-error.js';

export const REPEAT_FIGURES = [
  'roundsToTarget',
  'bytesToTarget',
  'uplinkBytesToTarget',
  'secondsToTarget',
  'roundsToTargetAccuracy',
  'bytesToTargetAccuracy',
  'secondsToTargetAccuracy',
  'finalSuboptimality',
  'rateMeasured',
  'floorMeasured',
] as const;

export type RepeatFigure = (typeof REPEAT_FIGURES)[number];

/** The figures measured only against run.targetAccuracy (a held-out accuracy to reach). */
export const ACCURACY_FIGURES: readonly RepeatFigure[] = [
  'roundsToTargetAccuracy',
  'bytesToTargetAccuracy',
  'secondsToTargetAccuracy',
];

/** The figures a comparison reports: the accuracy ones only where its scenarios name a target accuracy. */
export function measuredFigures(hasTargetAccuracy: boolean): RepeatFigure[] {
  return REPEAT_FIGURES.filter((f) => hasTargetAccuracy || !ACCURACY_FIGURES.includes(f));
}

/** The verdict's figures when none is named: the ones a single comparison has always ranked. */
export const VERDICT_FIGURES_DEFAULT: readonly RepeatFigure[] = [
  'bytesToTarget',
  'uplinkBytesToTarget',
  'secondsToTarget',
];

/** Units of the figures, in the tables' headers (bytes are shown as bytes, not kB, here). */
export const FIGURE_UNITS: Partial<Record<RepeatFigure, string>> = {
  roundsToTarget: 'rounds',
  bytesToTarget: 'bytes',
  uplinkBytesToTarget: 'bytes',
  secondsToTarget: 's',
  roundsToTargetAccuracy: 'rounds',
  bytesToTargetAccuracy: 'bytes',
  secondsToTargetAccuracy: 's',
};

/** One run's figures; null where the run has none (target not reached, diverged, failed). */
export type RunFigures = Record<RepeatFigure, number | null>;

/** "bytesToTarget" -> "bytes-to-target", the option's spelling. */
export function figureOptionName(figure: RepeatFigure): string {
  return figure.replace(/[A-Z]/g, (c) => `-${c.toLowerCase()}`);
}

/** "bytesToTarget" -> "bytes to target", the tables' spelling. */
export function figureWords(figure: RepeatFigure): string {
  return figure.replace(/[A-Z]/g, (c) => ` ${c.toLowerCase()}`);
}

/** Reads `--rank-by`; the error lists every accepted name. */
export function parseRankBy(text: string): RepeatFigure {
  const figure = REPEAT_FIGURES.find((f) => figureOptionName(f) === text.trim());
  if (figure === undefined)
    throw new ReportError(
      'E_COMPARE_REPEATS',
      `--rank-by "${text}": expected one of ${REPEAT_FIGURES.map(figureOptionName).join(', ')}`,
    );
  return figure;
}
