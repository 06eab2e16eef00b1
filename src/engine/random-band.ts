// outcome.json's `band`: the prediction for a run whose rounds are random (monte-carlo-band.ts),
// with the closed-form floor where one exists (minibatch-floor-prediction.ts) and the run's own
// average over the same stationary rounds beside it, so that a reader sees at once whether the
// run is what the theory expects.

import type { PlanTheory } from '../theory/plan-theory.js';
import { predictMinibatchFloor } from './minibatch-floor-prediction.js';
import {
  monteCarloBand,
  stationaryWindow,
  type BandOptions,
  type Interval,
} from './monte-carlo-band.js';
import type { RunPlan } from './run-plan.js';
import type { RandomBand } from './random-band-schema.js';

const REPLICA_SEEDS = "the first 53 bits of Rng.derive(plan seed, 'band-replica', r)";

function unavailable(reason: string, closedForm: RandomBand['closedForm']): RandomBand {
  return {
    available: false,
    reason,
    replicas: 0,
    replicaSeeds: REPLICA_SEEDS,
    rounds: [],
    mean: [],
    meanLow: [],
    meanHigh: [],
    singleRunLow: [],
    singleRunHigh: [],
    stationary: null,
    closedForm,
  };
}

/** The run's average f - f* over the evaluated rounds inside the window, or null. */
export function measuredWindowAverage(
  curve: readonly { round: number; suboptimality: number }[],
  window: Interval,
): number | null {
  let sum = 0;
  let count = 0;
  for (const point of curve) {
    if (point.round < window[0] || point.round > window[1]) continue;
    sum += point.suboptimality;
    count++;
  }
  return count === 0 ? null : sum / count;
}

/**
 * The band of a plan whose rounds are random, or why there is none (deterministic rounds: the
 * predicted trajectory is then the prediction, and the band is left out by the caller).
 */
export function predictRandomBand(
  plan: RunPlan,
  theory: PlanTheory,
  curve: readonly { round: number; suboptimality: number }[],
  options: BandOptions = {},
): RandomBand {
  const { objectives, global } = theory.instance;
  const closed = predictMinibatchFloor(plan, objectives, theory.optimum.x);
  const closedForm =
    'floor' in closed
      ? { floor: closed.floor, reason: null }
      : { floor: null, reason: closed.unavailableReason };
  const band = monteCarloBand(plan, objectives, global, theory.optimum, options);
  if ('unavailableReason' in band) return unavailable(band.unavailableReason, closedForm);
  const window = stationaryWindow(plan.scenario.run.rounds);
  return {
    available: true,
    reason: null,
    replicas: band.replicas,
    replicaSeeds: REPLICA_SEEDS,
    rounds: band.rounds,
    mean: band.mean,
    meanLow: band.meanLow,
    meanHigh: band.meanHigh,
    singleRunLow: band.singleLow,
    singleRunHigh: band.singleHigh,
    stationary: { ...band.stationary, measured: measuredWindowAverage(curve, window) },
    closedForm,
  };
}
