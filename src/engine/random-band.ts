// outcome.json's `band`: the prediction for a run whose rounds are random (monte-carlo-band.ts),
// with the closed-form floor where one exists (minibatch-floor-prediction.ts) and the run's own
// average over the same stationary rounds beside it, so that a reader sees at once whether the
// run is what the theory expects.

import { z } from 'zod';
import type { PlanTheory } from '../theory/plan-theory.js';
import { predictMinibatchFloor } from './minibatch-floor-prediction.js';
import {
  monteCarloBand,
  stationaryWindow,
  type BandOptions,
  type Interval,
} from './monte-carlo-band.js';
import type { RunPlan } from './run-plan.js';

const interval = z.tuple([z.number(), z.number()]);

export const randomBandSchema = z.object({
  /** false: no band, for `reason` */
  available: z.boolean(),
  reason: z.string().nullable(),
  replicas: z.number().int().nonnegative(),
  /** how replica r's seed is made */
  replicaSeeds: z.string(),
  /** evaluated rounds (possibly thinned) and, per round, the replicas' mean of f - f* */
  rounds: z.array(z.number().int().nonnegative()),
  mean: z.array(z.number()),
  /** 95% t-interval of the mean */
  meanLow: z.array(z.number()),
  meanHigh: z.array(z.number()),
  /** 2.5th to 97.5th percentile of single replicas: where one run is expected */
  singleRunLow: z.array(z.number()),
  singleRunHigh: z.array(z.number()),
  stationary: z
    .object({
      /** rounds [from, to]: the last quarter */
      window: interval,
      /** the replicas' mean of their time averages over the window, and its two intervals */
      mean: z.number(),
      meanInterval: interval,
      singleRunInterval: interval,
      /** the run's own average of its evaluated f - f* over the window (null: none evaluated) */
      measured: z.number().nullable(),
    })
    .nullable(),
  /** the closed-form stationary E[f - f*] (minibatch gradient descent on least squares) */
  closedForm: z.object({ floor: z.number().nullable(), reason: z.string().nullable() }),
});
export type RandomBand = z.output<typeof randomBandSchema>;

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
