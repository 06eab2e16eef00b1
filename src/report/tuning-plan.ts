// A comparison's tuning, planned with its variants: the spec, checked against the ladders (a
// field cannot be both moved and tuned) and against every variant (the field must take the
// candidate values), before anything runs; then, per variant, the search and the scenario the
// variant finally runs.

import { scenarioFromDocument } from '../scenario/load-scenario.js';
import { ScenarioError } from '../scenario/scenario-error.js';
import type { Scenario } from '../scenario/schema.js';
import type { Tweak } from '../scenario/tweaks.js';
import type { Variant } from './compare-variants.js';
import { ladderName, valueText, type Ladder } from './ladder.js';
import { formatNumber } from './text-table.js';
import { TUNING_FIGURES } from './tuning-figures.js';
import {
  fieldSourceText,
  measurableFiguresOf,
  tuningSpecOf,
  type TuningOptions,
  type TuningSpec,
} from './tuning-option.js';
import { fixedCandidates } from './tuning-search.js';
import { TuningError } from './tuning-error.js';
import { tuneVariant, type CandidateTrace } from './tune-variant.js';
import type { VariantTuningEntry } from './tuning-trace.js';

export interface PlannedTuning {
  spec: TuningSpec;
  /** variant `index` (0-based) with the tuned field at `value` */
  scenarioAt: (index: number, value: number) => Scenario;
}

function overlaps(a: string, b: string): boolean {
  return a === b || a.startsWith(`${b}.`) || b.startsWith(`${a}.`);
}

/** The values whose validity stands for every candidate: the list, or a range's two ends. */
function valuesToCheck(spec: TuningSpec): number[] {
  const fixed = fixedCandidates(spec.search);
  if (fixed !== null) return fixed;
  const s = spec.search as { low: number; high: number };
  return [s.low, s.high];
}

/** The tuning of a comparison, or null when there is none; throws TuningError naming the option. */
export function planTuning(
  document: unknown,
  tweaks: readonly Tweak[],
  base: Scenario,
  ladders: readonly Ladder[],
  variants: readonly Variant[],
  options: TuningOptions,
): PlannedTuning | null {
  const spec = tuningSpecOf(options, base.tuning, measurableFiguresOf(base));
  if (spec === null) return null;
  const moved = ladders.find((l) => l.fields.some((f) => overlaps(f, spec.field)));
  if (moved !== undefined)
    throw new TuningError(
      'E_TUNE_FIELD',
      `${fieldSourceText(options)}: ladder ${ladderName(moved)} moves ${spec.field} too; tune it or ladder it, not both`,
    );
  const path = spec.field.split('.');
  const scenarioAt = (index: number, value: number) =>
    scenarioFromDocument(document, [...tweaks, ...variants[index].tweaks, { path, value }]);
  for (const variant of variants) {
    for (const value of valuesToCheck(spec)) {
      try {
        scenarioAt(variant.index, value);
      } catch (error) {
        if (!(error instanceof ScenarioError)) throw error;
        throw new TuningError(
          'E_TUNE_FIELD',
          `${fieldSourceText(options)}: ${spec.field} at ${valueText(value)} (variant ${variant.label}): ${error.message}`,
        );
      }
    }
  }
  return { spec, scenarioAt };
}

function figureText(spec: TuningSpec, t: Omit<CandidateTrace, 'value'>): string {
  if (t.diverged) return 'diverged';
  const figure = TUNING_FIGURES[spec.figure];
  if (t.figure === null)
    return `target not reached, f - f* ${formatNumber(t.finalSuboptimality ?? Number.NaN)}`;
  return `${figure.title} ${formatNumber(t.figure)}${figure.unit === '' ? '' : ` ${figure.unit}`}`;
}

/** A winner at an end of a grid's range may have a better value beyond it: the user should know. */
function rangeEndNote(spec: TuningSpec, value: number): string {
  const s = spec.search;
  if (s.kind !== 'grid') return '';
  const near = (end: number) => Math.abs(value / end - 1) < 1e-9;
  if (near(s.high)) return ' (the high end of the range: a larger value may do better)';
  if (near(s.low)) return ' (the low end of the range: a smaller value may do better)';
  return '';
}

/** Searches one variant; returns the scenario it then runs at its tuned value, and its trace entry. */
export function tunePlannedVariant(
  tuning: PlannedTuning,
  variant: Variant,
  untuned: Scenario,
  progress: (text: string) => void,
): { scenario: Scenario; entry: VariantTuningEntry } {
  const { spec } = tuning;
  const result = tuneVariant(spec, (value) => tuning.scenarioAt(variant.index, value), untuned);
  const diverged = result.candidates.filter((c) => c.diverged).length;
  progress(
    `tuned ${variant.label}: ${spec.field} ${formatNumber(result.tunedValue)}${rangeEndNote(spec, result.tunedValue)}, ${figureText(spec, result.candidates[result.best])} (${result.candidates.length} candidates, ${diverged} diverged; own value ${valueText(result.untuned.value)}: ${figureText(spec, result.untuned)})\n`,
  );
  return {
    scenario: tuning.scenarioAt(variant.index, result.tunedValue),
    entry: { variant: variant.label, folder: variant.folderName, ...result },
  };
}
