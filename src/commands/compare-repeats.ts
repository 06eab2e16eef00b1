// The runs of one variant of a comparison: each repeat into its own folder, with its own seeds
// (repeat-plan.ts). A run that ends in an error is recorded as failed with its reason and the
// comparison goes on; a diverged run is a stop like any other, and neither gives figures. Only
// repeat 1 gets its report.html (the page draws its curves): rendering one for every repeat would
// cost more than the run; `roundwire report <folder>` writes one for any repeat later.

import { join } from 'node:path';
import type { Scenario } from '../scenario/schema.js';
import { dataSeedOf } from '../scenario/data-seed.js';
import { runInProcessInto } from './run-report.js';
import { runDistributed } from './run-distributed.js';
import { readRunResults, reportFileName } from './report-command.js';
import { writeFileSync } from 'node:fs';
import { buildRunReport } from '../report/run-report-page.js';
import {
  compareRow,
  FAILED_STOP,
  type TimeBasis,
  type VariantOutcome,
} from '../report/compare-table.js';
import type { Variant } from '../report/compare-variants.js';
import { repeatScenario, type RepeatOptions } from '../report/repeat-plan.js';
import type { RepeatRun } from '../report/repeat-summary.js';
import type { RunFigures } from '../report/repeat-figures.js';

export interface RunIo {
  err: (text: string) => void;
}

/** repeat-01, repeat-02, ...: sorts in repeat order up to the limit of 100. */
export function repeatFolderName(repeat: number): string {
  return `repeat-${String(repeat).padStart(2, '0')}`;
}

function messageOf(error: unknown): string {
  return error instanceof Error ? error.message : String(error);
}

/** Runs one scenario into `dir`; an error becomes a failed outcome instead of ending the comparison. */
async function runOnce(
  scenario: Scenario,
  variant: Variant,
  dir: string,
  options: { distributed: boolean; writeReport: boolean },
  io: RunIo,
): Promise<VariantOutcome> {
  try {
    if (options.distributed) await runDistributed(scenario, dir, { out: io.err, err: io.err });
    else runInProcessInto(scenario, dir);
    const results = readRunResults(dir);
    if (options.writeReport)
      writeFileSync(join(dir, reportFileName), await buildRunReport(results));
    return { variant, summary: results.summary, rounds: results.rounds };
  } catch (error) {
    return { variant, summary: null, rounds: [], failure: messageOf(error) };
  }
}

/** A run's figures; none for a failed or diverged run, whose last values mean nothing. */
function runFigures(outcome: VariantOutcome, timeBasis: TimeBasis): RunFigures {
  const row = compareRow(outcome, timeBasis);
  const usable = outcome.summary !== null && outcome.summary.stopReason !== 'diverged';
  const keep = (value: number | null) => (usable ? value : null);
  return {
    roundsToTarget: keep(row.roundsToTarget),
    bytesToTarget: keep(row.bytesToTarget),
    uplinkBytesToTarget: keep(row.uplinkBytesToTarget),
    secondsToTarget: keep(row.secondsToTarget),
    roundsToTargetAccuracy: keep(row.roundsToTargetAccuracy),
    bytesToTargetAccuracy: keep(row.bytesToTargetAccuracy),
    secondsToTargetAccuracy: keep(row.secondsToTargetAccuracy),
    finalSuboptimality: keep(outcome.summary?.suboptimality.final ?? null),
    rateMeasured: keep(row.rateMeasured),
    floorMeasured: keep(row.floorMeasured),
  };
}

export interface VariantRuns {
  /** repeat 1's outcome, whose curves the page draws */
  first: VariantOutcome;
  runs: RepeatRun[];
}

/** Every repeat of one variant, in order; one progress line a run. */
export async function runVariantRepeats(
  scenario: Scenario,
  variant: Variant,
  position: string,
  outDir: string,
  repeats: RepeatOptions,
  timeBasis: TimeBasis,
  distributed: boolean,
  io: RunIo,
  progress: (outcome: VariantOutcome, repeatText: string) => string,
): Promise<VariantRuns> {
  const runs: RepeatRun[] = [];
  let first: VariantOutcome | null = null;
  for (let repeat = 1; repeat <= repeats.count; repeat++) {
    const folder =
      repeats.count === 1 ? variant.folderName : join(variant.folderName, repeatFolderName(repeat));
    const runScenario = repeatScenario(scenario, repeat, repeats.redrawData);
    const outcome = await runOnce(
      runScenario,
      { ...variant, folderName: folder },
      join(outDir, folder),
      { distributed, writeReport: repeat === 1 },
      io,
    );
    const repeatText = repeats.count === 1 ? '' : ` repeat ${repeat}/${repeats.count}`;
    io.err(
      outcome.summary === null
        ? `variant ${position} ${variant.label}${repeatText}: ${FAILED_STOP}: ${outcome.failure}\n`
        : progress(outcome, repeatText),
    );
    first ??= outcome;
    runs.push({
      repeat,
      seed: runScenario.seed,
      dataSeed: dataSeedOf(runScenario),
      stop: outcome.summary?.stopReason ?? FAILED_STOP,
      failure: outcome.failure ?? null,
      folder,
      figures: runFigures(outcome, timeBasis),
    });
  }
  return { first: first as VariantOutcome, runs };
}
