// tuning.json, beside compare.json: what was searched, how candidates rank, and every candidate
// of every variant with its figure and whether it diverged, so that a reader can check the choice.
// compare.json carries the short form (ComparisonTuning) and names this file.

import { TUNING_FIGURES } from './tuning-figures.js';
import { tuningSpecText, type TuningSpec } from './tuning-option.js';
import type { SearchPlan } from './tuning-search.js';
import type { VariantTuning } from './tune-variant.js';

export const TUNING_TRACE_FILE = 'tuning.json';

/** The ranking rule, in words, as the trace and the page state it. */
export const TUNING_RANK_RULE =
  'candidates with the figure rank by it; those without it (target not reached) rank after them by final f - f*, lower first; diverged candidates rank last; ties go to the earlier candidate';

/** The tuning as compare.json and the table's heading show it. */
export interface ComparisonTuning {
  field: string;
  figure: string;
  search: SearchPlan['kind'];
  budget: number;
  /** the options that would repeat this tuning */
  options: string;
  /** where candidates ran; the final runs ran in the comparison's runtime */
  candidatesRuntime: 'in-process';
  trace: string;
}

export interface VariantTuningEntry extends VariantTuning {
  variant: string;
  folder: string;
}

export interface TuningTrace extends ComparisonTuning {
  figureTitle: string;
  unit: string;
  better: 'lower' | 'higher';
  target: number;
  searchPlan: SearchPlan;
  rankRule: string;
  variants: VariantTuningEntry[];
}

export function comparisonTuning(spec: TuningSpec): ComparisonTuning {
  return {
    field: spec.field,
    figure: spec.figure,
    search: spec.search.kind,
    budget: spec.budget,
    options: tuningSpecText(spec),
    candidatesRuntime: 'in-process',
    trace: TUNING_TRACE_FILE,
  };
}

export function tuningTrace(
  spec: TuningSpec,
  target: number,
  variants: VariantTuningEntry[],
): TuningTrace {
  const figure = TUNING_FIGURES[spec.figure];
  return {
    ...comparisonTuning(spec),
    figureTitle: figure.title,
    unit: figure.unit,
    better: figure.better,
    target,
    searchPlan: spec.search,
    rankRule: TUNING_RANK_RULE,
    variants,
  };
}

/** One line for the printed comparison and the page. */
export function tuningLine(t: ComparisonTuning): string {
  return `each variant ran at its own ${t.field}, tuned by ${t.figure} (${t.search} search, at most ${t.budget} candidate runs a variant, in process); every candidate is in ${t.trace}`;
}

export function tuningTraceJson(trace: TuningTrace): string {
  return `${JSON.stringify(trace, null, 2)}\n`;
}
