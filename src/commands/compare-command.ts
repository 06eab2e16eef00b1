// `roundwire compare <scenario> --ladder field:rung/rung ...`: every combination of one rung from
// each ladder, each run with the same seed, speeds and links into its own results folder (with
// report.html), then one table, compare.html, compare.csv and compare.json. With --repeats, each
// variant runs on several seeds (compare-repeats.ts) and the verdict says how sure it is.

import { gapName } from '../report/gap-name.js';
import { mkdirSync, writeFileSync } from 'node:fs';
import { join } from 'node:path';
import { readScenarioDocument, scenarioFromDocument } from '../scenario/load-scenario.js';
import type { Scenario } from '../scenario/schema.js';
import { parseTweak, type Tweak } from '../scenario/tweaks.js';
import { ScenarioError } from '../scenario/scenario-error.js';
import { assertPlannable } from '../engine/run-plan.js';
import type { RunSummary } from '../engine/run-summary.js';
import { runVariantRepeats } from './compare-repeats.js';
import { resolveRepeatOptions, type RepeatOptions } from '../report/repeat-plan.js';
import { summarizeRepeats, type RepeatRun, type RepeatSummary } from '../report/repeat-summary.js';
import {
  ACCURACY_FIGURES,
  VERDICT_FIGURES_DEFAULT,
  figureOptionName,
  measuredFigures,
  type RepeatFigure,
} from '../report/repeat-figures.js';
import { repeatCsv } from '../report/repeat-table.js';
import { expandVariants, type Variant } from '../report/compare-variants.js';
import {
  checkLadders,
  ladderName,
  laddersFromScenario,
  rungText,
  rungTweaks,
  type Ladder,
} from '../report/ladder.js';
import { parseLadderOption } from '../report/ladder-option.js';
import { ReportError } from '../report/report-error.js';
import {
  buildComparison,
  comparisonCsv,
  comparisonJson,
  type Comparison,
  type TimeBasis,
  type VariantOutcome,
} from '../report/compare-table.js';
import { buildComparePage } from '../report/compare-page.js';
import { formatNumber } from '../report/text-table.js';
import { planTuning, tunePlannedVariant, type PlannedTuning } from '../report/tuning-plan.js';
import type { TuningOptions } from '../report/tuning-option.js';
import {
  comparisonTuning,
  TUNING_TRACE_FILE,
  tuningTrace,
  tuningTraceJson,
  type VariantTuningEntry,
} from '../report/tuning-trace.js';

export const compareFiles = {
  html: 'compare.html',
  csv: 'compare.csv',
  json: 'compare.json',
  repeatsCsv: 'compare-repeats.csv',
} as const;

export interface CompareOptions extends TuningOptions {
  /** `--ladder` texts; when given, they replace the scenario's own ladders */
  ladder: string[];
  tweak: string[];
  out?: string;
  distributed?: boolean;
  /** runs of every variant, and how they are summarized (repeat-plan.ts) */
  repeats?: number;
  redrawData?: boolean;
  confidence?: number;
  /** the figures the verdict ranks by; absent, VERDICT_FIGURES_DEFAULT */
  rankBy?: RepeatFigure[];
}

/** A comparison and, with more than one repeat, its statistics over the repeats. */
export type ComparisonResult = Comparison & { repeats?: RepeatSummary };

export interface CompareIo {
  /** progress lines, one a variant */
  err: (text: string) => void;
}

export interface PlannedVariant {
  variant: Variant;
  scenario: Scenario;
}

export interface ComparisonPlan {
  base: Scenario;
  ladders: Ladder[];
  variants: PlannedVariant[];
  repeats: RepeatOptions;
  /** null when no field is tuned */
  tuning: PlannedTuning | null;
}

/** The scenario's reason, shown after what was being checked; its field only where the context does not name it. */
function reasonOf(error: unknown, contextField: string | null): string {
  if (error instanceof ScenarioError && error.fieldPath === contextField) return error.detail;
  if (error instanceof ScenarioError) return error.message;
  throw error;
}

/** Each rung on its own over the base, so that a bad value is blamed on its ladder and rung. */
function checkRungs(document: unknown, tweaks: readonly Tweak[], ladders: readonly Ladder[]): void {
  for (const ladder of ladders) {
    ladder.rungs.forEach((rung, i) => {
      try {
        scenarioFromDocument(document, [...tweaks, ...rungTweaks(ladder, i)]);
      } catch (error) {
        const reason = reasonOf(error, ladder.fields.length === 1 ? ladder.fields[0] : null);
        throw new ReportError(
          'E_LADDER_RUNG',
          `ladder ${ladderName(ladder)}, rung ${i + 1} (${rungText(rung)}): ${reason}`,
        );
      }
    });
  }
}

/** Validates the base scenario, every rung and every variant before anything runs, so bad input costs nothing. */
export function planComparison(
  file: string,
  options: Pick<
    CompareOptions,
    'ladder' | 'tweak' | 'repeats' | 'redrawData' | 'confidence' | 'rankBy'
  > &
    TuningOptions,
): ComparisonPlan {
  const document = readScenarioDocument(file);
  const tweaks = options.tweak.map(parseTweak);
  const base = scenarioFromDocument(document, tweaks);
  const ladders =
    options.ladder.length > 0
      ? options.ladder.map(parseLadderOption)
      : laddersFromScenario(base.ladders);
  checkLadders(ladders);
  checkRungs(document, tweaks, ladders);
  const variants = expandVariants(ladders).map((variant) => {
    try {
      return { variant, scenario: scenarioFromDocument(document, [...tweaks, ...variant.tweaks]) };
    } catch (error) {
      throw new ReportError(
        'E_COMPARE_VARIANTS',
        `variant ${variant.index + 1} (${variant.label}): these rungs do not go together: ${reasonOf(error, null)}`,
      );
    }
  });
  for (const { scenario } of variants) assertPlannable(scenario);
  const repeats = resolveRepeatOptions(base.repeats, options, variants.length);
  const unmeasured = (options.rankBy ?? []).find(
    (f) =>
      ACCURACY_FIGURES.includes(f) &&
      variants.some(({ scenario }) => scenario.run.targetAccuracy === undefined),
  );
  if (unmeasured !== undefined)
    throw new ReportError(
      'E_COMPARE_REPEATS',
      `--rank-by ${figureOptionName(unmeasured)}: every variant needs run.targetAccuracy (and a held-out part, data.testFraction) to be ranked by it`,
    );
  const tuning = planTuning(
    document,
    tweaks,
    base,
    ladders,
    variants.map((v) => v.variant),
    options,
  );
  return { base, ladders, variants, repeats, tuning };
}

/** results/compare-<scenario>-<utc stamp>: sorts by time and says what was compared. */
export function defaultCompareDir(scenario: Scenario, now: Date): string {
  const stamp = now
    .toISOString()
    .replace(/[-:]/g, '')
    .replace(/\.\d+Z$/, 'Z');
  return join('results', `compare-${scenario.name.replace(/[^A-Za-z0-9_.-]+/g, '_')}-${stamp}`);
}

/** Runs every variant (each as often as the plan repeats it), writes the comparison files; returns the comparison. */
export async function runComparison(
  plan: ComparisonPlan,
  outDir: string,
  options: Pick<CompareOptions, 'distributed' | 'rankBy'>,
  io: CompareIo,
): Promise<ComparisonResult> {
  mkdirSync(outDir, { recursive: true });
  const timeBasis: TimeBasis = plan.variants.every((v) => v.scenario.timing.clock === 'virtual')
    ? 'modelled'
    : 'wall';
  const outcomes: VariantOutcome[] = [];
  const runsByVariant: { variant: string; runs: RepeatRun[] }[] = [];
  const tuningEntries: VariantTuningEntry[] = [];
  for (const planned of plan.variants) {
    const position = `${planned.variant.index + 1}/${plan.variants.length}`;
    // Tuned once, on the variant's own seed; every repeat then runs at the tuned value.
    // Candidates run in process whatever the runtime: see src/report/tune-variant.ts.
    const tuned =
      plan.tuning === null
        ? null
        : tunePlannedVariant(plan.tuning, planned.variant, planned.scenario, io.err);
    if (tuned !== null) tuningEntries.push(tuned.entry);
    const { first, runs } = await runVariantRepeats(
      tuned === null ? planned.scenario : tuned.scenario,
      planned.variant,
      position,
      outDir,
      plan.repeats,
      timeBasis,
      options.distributed === true,
      io,
      (outcome, repeatText) => {
        const s = outcome.summary as RunSummary;
        return `variant ${position} ${planned.variant.label}${repeatText}: ${s.rounds} rounds (${s.stopReason}), ${gapName(s.theory.reference !== null, true)} ${formatNumber(s.suboptimality.final)}\n`;
      },
    );
    outcomes.push(tuned === null ? first : { ...first, tunedValue: tuned.entry.tunedValue });
    runsByVariant.push({ variant: planned.variant.label, runs });
  }
  const comparison: ComparisonResult = {
    ...buildComparison(plan.base.name, plan.base.run.target, plan.ladders, outcomes),
    ...(plan.tuning === null ? {} : { tuning: comparisonTuning(plan.tuning.spec) }),
  };
  if (plan.tuning !== null)
    writeFileSync(
      join(outDir, TUNING_TRACE_FILE),
      tuningTraceJson(tuningTrace(plan.tuning.spec, plan.base.run.target, tuningEntries)),
    );
  if (plan.repeats.count > 1) {
    comparison.repeats = summarizeRepeats(
      runsByVariant,
      plan.repeats,
      options.rankBy ?? VERDICT_FIGURES_DEFAULT,
      measuredFigures(
        plan.variants.every(({ scenario }) => scenario.run.targetAccuracy !== undefined),
      ),
    );
    writeFileSync(join(outDir, compareFiles.repeatsCsv), repeatCsv(comparison.repeats));
  }
  writeFileSync(join(outDir, compareFiles.csv), comparisonCsv(comparison));
  writeFileSync(join(outDir, compareFiles.json), comparisonJson(comparison));
  writeFileSync(
    join(outDir, compareFiles.html),
    await buildComparePage(comparison, outcomes, comparison.repeats),
  );
  return comparison;
}
