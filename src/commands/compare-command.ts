// `roundwire compare <scenario> --vary path=v1,v2 ...`: every combination of the varied values,
// each run with the same seed, speeds and links into its own results folder (with report.html),
// then one table, compare.html, compare.csv and compare.json.

import { mkdirSync, writeFileSync } from 'node:fs';
import { join } from 'node:path';
import { loadScenarioFile } from '../scenario/load-scenario.js';
import type { Scenario } from '../scenario/schema.js';
import { runInProcess } from '../engine/in-process-engine.js';
import { assertPlannable } from '../engine/run-plan.js';
import { finishRun } from './run-report.js';
import { runDistributed } from './run-distributed.js';
import { readRunResults, reportFileName } from './report-command.js';
import { buildRunReport } from '../report/run-report-page.js';
import { expandVariants, parseVary, sweepAxes, type Variant, type VaryAxis } from '../report/compare-variants.js';
import { buildComparison, comparisonCsv, comparisonJson, type Comparison, type VariantOutcome } from '../report/compare-table.js';
import { buildComparePage } from '../report/compare-page.js';
import { formatNumber } from './text-table.js';

export const compareFiles = { html: 'compare.html', csv: 'compare.csv', json: 'compare.json' } as const;

export interface CompareOptions {
  vary: string[];
  set: string[];
  out?: string;
  distributed?: boolean;
}

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
  axes: VaryAxis[];
  variants: PlannedVariant[];
}

/** Validates the base scenario and every variant before anything runs, so bad input costs nothing. */
export function planComparison(file: string, options: Pick<CompareOptions, 'vary' | 'set'>): ComparisonPlan {
  const base = loadScenarioFile(file, options.set);
  const axes = options.vary.length > 0 ? options.vary.map(parseVary) : sweepAxes(base);
  const variants = expandVariants(axes).map((variant) => ({ variant, scenario: loadScenarioFile(file, [...options.set, ...variant.overrides]) }));
  for (const { scenario } of variants) assertPlannable(scenario);
  return { base, axes, variants };
}

/** results/compare-<scenario>-<utc stamp>: sorts by time and says what was compared. */
export function defaultCompareDir(scenario: Scenario, now: Date): string {
  const stamp = now.toISOString().replace(/[-:]/g, '').replace(/\.\d+Z$/, 'Z');
  return join('results', `compare-${scenario.name.replace(/[^A-Za-z0-9_.-]+/g, '_')}-${stamp}`);
}

async function runVariant(planned: PlannedVariant, dir: string, distributed: boolean, io: CompareIo): Promise<void> {
  if (distributed) {
    await runDistributed(planned.scenario, dir, { out: io.err, err: io.err });
    return;
  }
  finishRun(runInProcess(planned.scenario), 'in-process', dir);
}

/** Runs every variant in turn, writes the folders and the comparison files; returns the comparison. */
export async function runComparison(plan: ComparisonPlan, outDir: string, options: Pick<CompareOptions, 'distributed'>, io: CompareIo): Promise<Comparison> {
  mkdirSync(outDir, { recursive: true });
  const outcomes: VariantOutcome[] = [];
  for (const planned of plan.variants) {
    const dir = join(outDir, planned.variant.folderName);
    await runVariant(planned, dir, options.distributed === true, io);
    const results = readRunResults(dir);
    writeFileSync(join(dir, reportFileName), await buildRunReport(results));
    const s = results.summary;
    io.err(`variant ${planned.variant.index + 1}/${plan.variants.length} ${planned.variant.label}: ${s.rounds} rounds (${s.stopReason}), f-f* ${formatNumber(s.suboptimality.final)}\n`);
    outcomes.push({ variant: planned.variant, summary: s, rounds: results.rounds });
  }
  const comparison = buildComparison(plan.base.name, plan.base.run.target, plan.axes, outcomes);
  writeFileSync(join(outDir, compareFiles.csv), comparisonCsv(comparison));
  writeFileSync(join(outDir, compareFiles.json), comparisonJson(comparison));
  writeFileSync(join(outDir, compareFiles.html), await buildComparePage(comparison, outcomes.map((o) => o.rounds)));
  return comparison;
}
