// One client's step time in one round: the base step cost times its persistent slowdown s_i,
// times a per-round jitter and a transient straggler factor.
//
// - jitter: exp(jitter Z), Z ~ N(0, 1): lognormal with sigma = jitter and median 1 (its mean is
//   exp(jitter^2 / 2), so a large jitter also slows the average round; that is the model).
// - transient: `factor` with probability `probability`, else 1, independently per (client, round).
//
// The draws of (client, round) come from Rng.derive(seed, 'speed', clientId, round), so the
// value does not depend on which other clients or rounds were asked for first: the engine, the
// coordinator and a worker all get the same number.

import { Rng } from '../base/rng.js';
import type { Scenario } from '../scenario/schema.js';
import { assertIntegerInRange } from './errors.js';
import { drawSlowdowns } from './slowdown.js';

type Timing = Scenario['timing'];

export interface SpeedModel {
  /** base cost of one local step on the fastest device */
  readonly stepCostSeconds: number;
  /** s_i >= 1 per client, fixed for the run */
  readonly slowdowns: Float64Array;
  /** lognormal sigma of the per-round jitter */
  readonly jitter: number;
  readonly transient: { readonly probability: number; readonly factor: number };
  /** the plan seed */
  readonly seed: number;
}

/** The run's speed model: draws every client's persistent slowdown once. */
export function speedModelFor(timing: Timing, clientCount: number, seed: number): SpeedModel {
  return {
    stepCostSeconds: timing.stepCostSeconds,
    slowdowns: drawSlowdowns(timing, clientCount, seed),
    jitter: timing.jitter,
    transient: { probability: timing.transient.probability, factor: timing.transient.factor },
    seed,
  };
}

/**
 * How many times slower than the base cost client `clientId` steps in `round`. The wall clock
 * multiplies a measured base cost by it; the virtual clock uses stepSecondsFor.
 */
export function stepFactorFor(model: SpeedModel, clientId: number, round: number): number {
  assertIntegerInRange('clientId', clientId, 0, model.slowdowns.length - 1);
  assertIntegerInRange('round', round, 0, Number.MAX_SAFE_INTEGER);
  // With neither jitter nor transients both factors are exactly 1 (exp(0 z) = 1 for a finite z):
  // the same number without the two draws, which every client costs every round.
  if (model.jitter === 0 && model.transient.probability === 0) return model.slowdowns[clientId];
  const rng = Rng.derive(model.seed, 'speed', clientId, round);
  // Both draws are always taken, in this order, so that each keeps its meaning whatever the
  // settings: turning jitter on does not change which rounds see a transient event.
  const z = rng.normal();
  const u = rng.nextFloat();
  const jitterFactor = Math.exp(model.jitter * z);
  const transientFactor = u < model.transient.probability ? model.transient.factor : 1;
  return model.slowdowns[clientId] * jitterFactor * transientFactor;
}

/** Seconds one local step of client `clientId` takes in `round` (virtual clock). */
export function stepSecondsFor(model: SpeedModel, clientId: number, round: number): number {
  return model.stepCostSeconds * stepFactorFor(model, clientId, round);
}
