// The command-line form of a comparison's tuning, and the one spec it and the scenario's `tuning`
// section become:
//
//   --tune method.stepSize:0.001..1        a range, searched on the log scale
//   --tune method.stepSize:0.01/0.03/0.1   a list of candidates (slashes, as ladder rungs)
//   --tune-search grid:4 | golden          a log grid with 4 points a decade, or golden section
//   --tune-budget 16                       candidate runs a variant may make
//   --tune-by rounds-to-target             the figure that ranks candidates
//
// --tune replaces the scenario's tuning section; the other three override its fields.

import { tuningSchema, type Scenario, type ScenarioTuning } from '../scenario/schema.js';
import { fieldPathKeys } from '../scenario/tweaks.js';
import { GOLDEN_BUDGET_MIN, fixedCandidates, type SearchPlan } from './tuning-search.js';
import {
  isTuningFigureName,
  TUNING_FIGURE_NAMES,
  TUNING_FIGURES,
  type FigureNeed,
  type TuningFigureName,
} from './tuning-figures.js';
import { TuningError } from './tuning-error.js';

export interface TuningOptions {
  tune?: string;
  tuneSearch?: string;
  tuneBudget?: string;
  tuneBy?: string;
}

/** A checked tuning: what to search, how, within what budget, by which figure. */
export interface TuningSpec {
  /** dotted field path, e.g. method.stepSize */
  field: string;
  search: SearchPlan;
  /** candidate runs a variant may make */
  budget: number;
  figure: TuningFigureName;
}

export const tuningOptionHelp = `
Tuning (one field, searched per variant before it runs; candidates run in process):
  --tune method.stepSize:0.001..1          a range, searched on the log scale
  --tune method.stepSize:0.01/0.03/0.1     a list of candidates
  --tune-search grid:4 | golden            a log grid, 4 points a decade (default), or
                                           golden-section search on log(value)
  --tune-budget 16                         candidate runs a variant may make (default 16)
  --tune-by ${TUNING_FIGURE_NAMES.join(' | ')}
                                           the figure that ranks candidates (default
                                           rounds-to-target); not reaching the target ranks
                                           after reaching it, then by final f - f*; diverged last
  In the scenario file:
    tuning: {field: method.stepSize, range: [0.001, 1], search: grid, pointsPerDecade: 4,
             budget: 16, by: rounds-to-target}
  --tune replaces the scenario's tuning section; --tune-search, --tune-budget and --tune-by
  override its fields. The trace of every candidate is written to tuning.json.`;

const OPTION_OF_KEY: Record<string, keyof TuningOptions> = {
  field: 'tune',
  values: 'tune',
  range: 'tune',
  search: 'tuneSearch',
  pointsPerDecade: 'tuneSearch',
  budget: 'tuneBudget',
  by: 'tuneBy',
};

const OPTION_NAMES: Record<keyof TuningOptions, string> = {
  tune: '--tune',
  tuneSearch: '--tune-search',
  tuneBudget: '--tune-budget',
  tuneBy: '--tune-by',
};

function optionError(option: keyof TuningOptions, text: string, reason: string): TuningError {
  return new TuningError(
    'E_TUNE_OPTION',
    `${OPTION_NAMES[option]} ${JSON.stringify(text)}: ${reason}`,
  );
}

/** A positive finite number written plainly (1e-3, 0.05), or the reason it is not one. */
function positiveNumber(text: string): number | string {
  const value = Number(text.trim());
  if (text.trim() === '' || !Number.isFinite(value))
    return `${JSON.stringify(text)} is not a number`;
  if (value <= 0)
    return `${text.trim()} is not positive (candidates are searched on the log scale)`;
  return value;
}

function readTune(text: string): Partial<ScenarioTuning> {
  const colon = text.indexOf(':');
  if (colon < 0)
    throw optionError('tune', text, 'no colon; expected field:low..high or field:v1/v2/...');
  const field = text.slice(0, colon).trim();
  const keys = fieldPathKeys(field);
  if (typeof keys === 'string') throw optionError('tune', text, keys);
  const rest = text.slice(colon + 1).trim();
  if (rest === '') throw optionError('tune', text, 'no candidates after the colon');
  if (rest.includes('..')) {
    const ends = rest.split('..');
    if (ends.length !== 2) throw optionError('tune', text, 'expected one range low..high');
    const [low, high] = ends.map(positiveNumber);
    if (typeof low === 'string') throw optionError('tune', text, `low end: ${low}`);
    if (typeof high === 'string') throw optionError('tune', text, `high end: ${high}`);
    if (!(low < high))
      throw optionError('tune', text, `the low end ${low} must be below the high end ${high}`);
    return { field, range: [low, high] };
  }
  const values = rest.split('/').map(positiveNumber);
  const bad = values.findIndex((v) => typeof v === 'string');
  if (bad >= 0) throw optionError('tune', text, `candidate ${bad + 1}: ${values[bad] as string}`);
  return { field, values: values as number[] };
}

function readSearch(text: string): Partial<ScenarioTuning> {
  const [kind, count, ...extra] = text.trim().split(':');
  if (kind === 'golden' && count === undefined) return { search: 'golden' };
  if (kind === 'grid' && extra.length === 0) {
    if (count === undefined) return { search: 'grid' };
    const perDecade = Number(count);
    if (!Number.isInteger(perDecade) || perDecade <= 0)
      throw optionError('tuneSearch', text, 'points a decade must be a positive whole number');
    return { search: 'grid', pointsPerDecade: perDecade };
  }
  throw optionError('tuneSearch', text, 'expected grid, grid:N (N points a decade) or golden');
}

function readBudget(text: string): Partial<ScenarioTuning> {
  const budget = Number(text.trim());
  if (!Number.isInteger(budget) || budget <= 0)
    throw optionError('tuneBudget', text, 'expected a positive whole number of candidate runs');
  return { budget };
}

/** The section as the options and the scenario give it, before the schema checks it. */
function mergedSection(
  options: TuningOptions,
  scenarioTuning: ScenarioTuning | undefined,
): Record<string, unknown> | null {
  const base = options.tune !== undefined ? readTune(options.tune) : scenarioTuning;
  const overrides = {
    ...(options.tuneSearch !== undefined ? readSearch(options.tuneSearch) : {}),
    ...(options.tuneBudget !== undefined ? readBudget(options.tuneBudget) : {}),
    ...(options.tuneBy !== undefined ? { by: options.tuneBy } : {}),
  };
  if (base === undefined) {
    const given = (['tuneSearch', 'tuneBudget', 'tuneBy'] as const).find(
      (k) => options[k] !== undefined,
    );
    if (given === undefined) return null;
    throw optionError(
      given,
      options[given] as string,
      'there is nothing to tune: give --tune field:low..high or a tuning section in the scenario',
    );
  }
  return { ...base, ...overrides };
}

/** Where a problem with one key of the section came from: its option, or the scenario's field. */
function sourceOf(key: string, options: TuningOptions): { name: string; text: string | null } {
  const option = OPTION_OF_KEY[key];
  if (option !== undefined && options[option] !== undefined)
    return { name: OPTION_NAMES[option], text: options[option] as string };
  // With --tune the scenario's section is not read: a key no option gave holds its default.
  if (option !== undefined && options.tune !== undefined)
    return { name: `${OPTION_NAMES[option]} (not given, so its default)`, text: null };
  return { name: key === '' ? 'tuning' : `tuning.${key}`, text: null };
}

/** Where the tuned field was named, for a message about it: the --tune option or the scenario's field. */
export function fieldSourceText(options: TuningOptions): string {
  return options.tune !== undefined ? `--tune ${JSON.stringify(options.tune)}` : 'tuning.field';
}

function sectionError(key: string, options: TuningOptions, reason: string): TuningError {
  const source = sourceOf(key, options);
  const where =
    source.text === null ? source.name : `${source.name} ${JSON.stringify(source.text)}`;
  return new TuningError('E_TUNE_OPTION', `${where}: ${reason}`);
}

function searchPlanOf(section: ScenarioTuning): SearchPlan {
  if (section.values !== undefined) return { kind: 'list', values: section.values };
  const [low, high] = section.range as [number, number];
  return section.search === 'golden'
    ? { kind: 'golden', low, high, budget: section.budget }
    : { kind: 'grid', low, high, pointsPerDecade: section.pointsPerDecade };
}

/** What the base scenario can measure: its f - f* target, and held-out accuracy and its target. */
export interface MeasurableFigures {
  target: number;
  /** a classifier that holds out a test part (data.testFraction > 0) */
  heldOutAccuracy?: boolean;
  /** run.targetAccuracy is set */
  targetAccuracy?: boolean;
}

export function measurableFiguresOf(scenario: Scenario): MeasurableFigures {
  return {
    target: scenario.run.target,
    heldOutAccuracy: scenario.problem.kind !== 'least-squares' && scenario.data.testFraction > 0,
    targetAccuracy: scenario.run.targetAccuracy !== undefined,
  };
}

/** Null when the scenario measures what the figure needs; otherwise what it lacks, in words. */
function missingNeed(need: FigureNeed, m: MeasurableFigures): string | null {
  switch (need) {
    case null:
      return null;
    case 'target':
      return m.target > 0
        ? null
        : 'a target (run.target > 0); use final-suboptimality or set run.target';
    case 'heldOutAccuracy':
      return m.heldOutAccuracy === true
        ? null
        : 'a held-out accuracy: a classifier (logistic, softmax, perceptron) with data.testFraction > 0';
    case 'targetAccuracy':
      return m.targetAccuracy === true
        ? null
        : 'run.targetAccuracy (a classifier with data.testFraction > 0)';
  }
}

/**
 * The comparison's tuning from the options and the scenario's section, checked: the figure is
 * one the table knows (and has a target when it needs one), and the candidates fit the budget.
 * Null when there is nothing to tune.
 */
export function tuningSpecOf(
  options: TuningOptions,
  scenarioTuning: ScenarioTuning | undefined,
  measurable: MeasurableFigures,
): TuningSpec | null {
  const raw = mergedSection(options, scenarioTuning);
  if (raw === null) return null;
  const parsed = tuningSchema.safeParse(raw);
  if (!parsed.success) {
    const issue = parsed.error.issues[0];
    throw sectionError(String(issue.path[0] ?? ''), options, issue.message);
  }
  const section = parsed.data;
  if (!isTuningFigureName(section.by))
    throw sectionError('by', options, `unknown figure; expected ${TUNING_FIGURE_NAMES.join(', ')}`);
  const missing = missingNeed(TUNING_FIGURES[section.by].needs, measurable);
  if (missing !== null) throw sectionError('by', options, `${section.by} needs ${missing}`);
  const search = searchPlanOf(section);
  const fixed = fixedCandidates(search);
  if (fixed !== null && fixed.length > section.budget)
    throw sectionError(
      'budget',
      options,
      `${fixed.length} candidates (${search.kind === 'grid' ? `${search.pointsPerDecade} a decade from ${search.low} to ${search.high}` : 'the list'}) exceed the budget of ${section.budget} runs a variant; raise the budget or use fewer candidates`,
    );
  if (search.kind === 'golden' && section.budget < GOLDEN_BUDGET_MIN)
    throw sectionError(
      'budget',
      options,
      `golden-section search needs at least ${GOLDEN_BUDGET_MIN} candidate runs`,
    );
  return { field: section.field, search, budget: section.budget, figure: section.by };
}

/** The spec in the command-line form, for the page and the trace. */
export function tuningSpecText(spec: TuningSpec): string {
  const s = spec.search;
  const tune = s.kind === 'list' ? s.values.join('/') : `${s.low}..${s.high}`;
  const search =
    s.kind === 'grid'
      ? ` --tune-search grid:${s.pointsPerDecade}`
      : s.kind === 'golden'
        ? ' --tune-search golden'
        : '';
  return `--tune ${spec.field}:${tune}${search} --tune-budget ${spec.budget} --tune-by ${spec.figure}`;
}
