// One variant's tuning: every candidate value runs in process (virtual clock: deterministic, no
// sockets, and the same rounds a distributed run of it walks), is measured from its rounds, and
// ranked by the chosen figure; the variant's own value runs once more as the untuned reference.
// A candidate that diverges is recorded as diverged and the search goes on.

import { isNonFiniteError } from '../base/coded-error.js';
import { runInProcess } from '../engine/in-process-engine.js';
import type { RoundRecord } from '../engine/round-record.js';
import type { StopReason } from '../engine/run-summary.js';
import type { Scenario } from '../scenario/schema.js';
import {
  compareMeasures,
  isDiverged,
  measureRounds,
  TUNING_FIGURES,
  type CandidateMeasure,
} from './tuning-figures.js';
import type { TuningSpec } from './tuning-option.js';
import { bestStep, runSearch } from './tuning-search.js';

/** One candidate run as tuning.json shows it. */
export interface CandidateTrace {
  value: number;
  stop: StopReason;
  diverged: boolean;
  /** the chosen figure; null when the run has none (did not reach the target, or diverged) */
  figure: number | null;
  rounds: number;
  /** the last finite f - f*; null when there was none */
  finalSuboptimality: number | null;
}

export interface VariantTuning {
  /** the candidates in the order they ran */
  candidates: CandidateTrace[];
  /** index of the winner in `candidates` */
  best: number;
  tunedValue: number;
  /** the variant at its own value of the field (as the scenario gives it, e.g. "auto") */
  untuned: { value: unknown } & Omit<CandidateTrace, 'value'>;
}

/** Runs one candidate in process and measures it; a non-finite error counts as diverging. */
export function measureCandidate(scenario: Scenario): CandidateMeasure {
  const rounds: RoundRecord[] = [];
  let stopReason: StopReason;
  try {
    stopReason = runInProcess(scenario, {
      openRecords: () => ({ append: (record) => void rounds.push(record) }),
    }).stopReason;
  } catch (error) {
    if (!isNonFiniteError(error)) throw error;
    stopReason = 'diverged';
  }
  return measureRounds(rounds, stopReason, scenario.run.target, scenario.run.targetAccuracy);
}

function traceOf(spec: TuningSpec, m: CandidateMeasure): Omit<CandidateTrace, 'value'> {
  const diverged = isDiverged(m);
  return {
    stop: m.stopReason,
    diverged,
    figure: diverged ? null : TUNING_FIGURES[spec.figure].valueOf(m),
    rounds: m.rounds,
    finalSuboptimality: Number.isFinite(m.finalSuboptimality) ? m.finalSuboptimality : null,
  };
}

/** The value at a dotted path of a resolved scenario (undefined where there is none). */
export function valueAt(scenario: Scenario, field: string): unknown {
  let node: unknown = scenario;
  for (const key of field.split('.')) {
    if (node === null || typeof node !== 'object') return undefined;
    node = (node as Record<string, unknown>)[key];
  }
  return node;
}

/**
 * Searches `spec.field` for one variant: `scenarioAt(value)` is the variant with the field at
 * `value`, `untuned` the variant as it stands. `onCandidate` hears of each run as it ends.
 */
export function tuneVariant(
  spec: TuningSpec,
  scenarioAt: (value: number) => Scenario,
  untuned: Scenario,
  onCandidate: (trace: CandidateTrace) => void = () => {},
): VariantTuning {
  const figure = TUNING_FIGURES[spec.figure];
  const better = (a: CandidateMeasure, b: CandidateMeasure) => compareMeasures(figure, a, b);
  const steps = runSearch(
    spec.search,
    (value) => {
      const measure = measureCandidate(scenarioAt(value));
      onCandidate({ value, ...traceOf(spec, measure) });
      return measure;
    },
    better,
  );
  const best = bestStep(steps, better);
  return {
    candidates: steps.map((s) => ({ value: s.value, ...traceOf(spec, s.measure) })),
    best,
    tunedValue: steps[best].value,
    untuned: {
      value: valueAt(untuned, spec.field),
      ...traceOf(spec, measureCandidate(untuned)),
    },
  };
}
