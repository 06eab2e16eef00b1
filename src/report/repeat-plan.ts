// Which seeds the repeats of a comparison run with. Repeat 1 is the variant as written, so a
// comparison with one repeat is the comparison it always was; repeat r > 1 takes a seed derived
// from the variant's seed and r. Variants that share a seed (every ladder but one moving the seed
// itself) therefore run repeat r with the same seeds: a paired design, where the difference between
// two variants in one repeat is not blurred by their luck. The data keeps its own seed unless the
// repeats vary it too.

import { Rng } from '../base/rng.js';
import { dataSeedOf } from '../scenario/data-seed.js';
import {
  REPEATS_DEFAULTS,
  REPEATS_LIMITS,
  type ScenarioRepeats,
} from '../scenario/repeats-schema.js';
import type { Scenario } from '../scenario/schema.js';
import { ReportError } from './report-error.js';

export type RepeatOptions = ScenarioRepeats;

/** The options given on the command line; each one given wins over the scenario's section. */
export interface RepeatOverrides {
  repeats?: number;
  redrawData?: boolean;
  confidence?: number;
}

export function resolveRepeatOptions(
  section: ScenarioRepeats | undefined,
  overrides: RepeatOverrides,
  variantCount: number,
): RepeatOptions {
  const options: RepeatOptions = {
    count: overrides.repeats ?? section?.count ?? REPEATS_DEFAULTS.count,
    redrawData: overrides.redrawData ?? section?.redrawData ?? REPEATS_DEFAULTS.redrawData,
    confidence: overrides.confidence ?? section?.confidence ?? REPEATS_DEFAULTS.confidence,
  };
  const runs = options.count * variantCount;
  if (runs > REPEATS_LIMITS.runsMax)
    throw new ReportError(
      'E_COMPARE_REPEATS',
      `${variantCount} variants x ${options.count} repeats = ${runs} runs exceed the limit of ${REPEATS_LIMITS.runsMax}; use fewer repeats or rungs`,
    );
  return options;
}

/** The seed of repeat `repeat` (1-based) of a variant whose own seed is `seed`. */
export function repeatSeed(seed: number, repeat: number): number {
  if (repeat === 1) return seed;
  return Number(Rng.derive(seed, 'repeat', repeat).nextUint64() >> 11n);
}

/**
 * The variant's scenario for one repeat: repeat 1 as written; later ones with another seed, the
 * data's seed fixed or varied with it.
 */
export function repeatScenario(scenario: Scenario, repeat: number, redrawData: boolean): Scenario {
  if (repeat === 1) return scenario;
  const seed = repeatSeed(scenario.seed, repeat);
  return { ...scenario, seed, dataSeed: redrawData ? seed : dataSeedOf(scenario) };
}
