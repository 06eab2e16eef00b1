// The predicted mean-square behaviour of a run whose rounds are random (minibatch gradients,
// partial participation, or both): R replicas of the ideal run, each walked by direct calls with
// the very round code a run uses, and per round the replicas' mean of f - f* with two bands.
//
// The ideal run keeps what the theory predicts about: no compression, no dropped update, the
// plan's tau_i (the run's own per-round tau_i: the speed model stays the run's, so a deadline
// cuts tau_i as it did in the run), step sizes, batch size and participation fraction, from the
// run's initial model. Only the random draws change: replica r runs with the plan seed replaced
// by its replica seed, the first 53 bits of Rng.derive(plan seed, 'band-replica', r). Its
// minibatches and participants then come from streams rooted at that seed, not at the run's, so
// the replicas are independent of each other and of the run (the data, built from the plan seed
// before, is shared).
//
// Two bands, because a user holds ONE run against them:
//  - the mean band: a 95% t-interval of E[f - f*] from the R replicas (the replica mean +- t
//    s / sqrt(R)); the curve averaged over many seeds should lie in it.
//  - the single-run band: the 2.5th to 97.5th percentile of the R replicas (linear interpolation
//    between order statistics, common practice); a single run's curve is expected inside it at
//    about 95% of its rounds.
// The stationary part is the last quarter of the rounds: there each replica's time average is one
// sample, and the same two intervals of those R averages say whether a run's average over the
// same rounds is what the theory expects (the window average smooths the noise of single rounds).

import { Rng } from '../base/rng.js';
import { thinIndices } from '../base/thin.js';
import type { Objective } from '../problem/objective.js';
import type { Scenario } from '../scenario/schema.js';
import { hashOf } from '../scenario/plan-hash.js';
import { studentTQuantile975, STUDENT_T_DEGREES_MIN } from '../theory/student-t-quantile.js';
import { speedModelFor } from '../timing/round-speed.js';
import { ClientRuntime } from './client-runtime.js';
import { DirectTransport } from './direct-transport.js';
import { evaluateModel } from './evaluate.js';
import { idealPlan } from './ideal-plan.js';
import { roundMapStateEntries } from './method-state-size.js';
import { noDropsPlan, type TrajectoryOptimum } from './predicted-trajectory.js';
import { walkRound, walkSetup } from './round-walk.js';
import type { RunPlan } from './run-plan.js';
import { ServerRuntime } from './server-runtime.js';
import { driveSync } from './walk-transport.js';

/** Replicas by default: a t-interval's half-width is then within 4% of its limit for many replicas. */
export const BAND_REPLICAS_DEFAULT = 32;
/** Fewest replicas: below, the t quantile's expansion and a 95% percentile band mean little. */
export const BAND_REPLICAS_MIN = STUDENT_T_DEGREES_MIN + 1;
/** Most replicas: each costs one whole ideal run. */
export const BAND_REPLICAS_MAX = 256;
/** Most f - f* values held at once (replicas x evaluated rounds): 32 MiB of float64. */
export const BAND_VALUES_MAX = 2 ** 22;
/**
 * Most state entries x replicas x rounds walked: a round costs at least one pass over the
 * method's state, and at this size the replicas take minutes on the 2-core machine.
 */
export const BAND_STATE_ROUNDS_MAX = 2 ** 30;
/**
 * Most ideal rounds the replicas walk in all (replicas x rounds): the band is computed when the
 * run ends, and every replica round costs about what a round of the run costs in process
 * (measured: 0.7 ms a round on the quickstart with partial participation, so this limit is
 * under a minute there). A longer run gets no band, with the reason, rather than an end that
 * takes 32 times as long as the run.
 */
export const BAND_REPLICA_ROUNDS_MAX = 2 ** 16;
/** Most points of each per-round series kept in the results (evenly thinned). */
export const BAND_POINTS_MAX = 2048;
/** The stationary part: this last share of the rounds. */
export const STATIONARY_SHARE = 0.25;

export interface BandOptions {
  /** R, in [BAND_REPLICAS_MIN, BAND_REPLICAS_MAX] */
  replicas?: number;
  /** the run's starting model (default zero) */
  initialModel?: Float64Array;
}

/** An interval [low, high]. */
export type Interval = [number, number];

export interface MonteCarloBand {
  replicas: number;
  /** evaluated rounds (0 = the initial model), possibly thinned */
  rounds: number[];
  /** replica mean of f - f* at each round */
  mean: number[];
  /** 95% t-interval of the mean, per round */
  meanLow: number[];
  meanHigh: number[];
  /** 2.5th and 97.5th percentiles of single replicas, per round */
  singleLow: number[];
  singleHigh: number[];
  /** the stationary part: rounds [from, to], and the replicas' time averages over it */
  stationary: {
    window: Interval;
    mean: number;
    meanInterval: Interval;
    singleRunInterval: Interval;
  };
}

/** True where some round is random: minibatch gradients or partial participation. */
export function roundsAreRandom(scenario: Scenario): boolean {
  const { gradient, participation } = scenario.method;
  return gradient !== 'full' || participation < 1;
}

/** Why a scenario's rounds have no Monte Carlo band (deterministic rounds, or too large), or null. */
export function bandBlocker(scenario: Scenario, dim: number, replicas: number): string | null {
  if (!roundsAreRandom(scenario))
    return 'every round is deterministic: the predicted trajectory is the prediction';
  if (!Number.isInteger(replicas) || replicas < BAND_REPLICAS_MIN || replicas > BAND_REPLICAS_MAX)
    return `replicas must be an integer in [${BAND_REPLICAS_MIN}, ${BAND_REPLICAS_MAX}], got ${replicas}`;
  const rounds = scenario.run.rounds;
  if (replicas * (rounds + 1) > BAND_VALUES_MAX)
    return `${replicas} replicas x ${rounds + 1} rounds is above the limit of ${BAND_VALUES_MAX} values held`;
  if (replicas * rounds > BAND_REPLICA_ROUNDS_MAX)
    return `${replicas} replicas x ${rounds} rounds is above the limit of ${BAND_REPLICA_ROUNDS_MAX} ideal rounds walked for the band`;
  const entries = roundMapStateEntries(scenario, dim);
  if (entries * replicas * rounds > BAND_STATE_ROUNDS_MAX)
    return `${entries} state entries x ${replicas} replicas x ${rounds} rounds is above the limit of ${BAND_STATE_ROUNDS_MAX}`;
  return null;
}

/** Replica r's seed: the first 53 bits of Rng.derive(planSeed, 'band-replica', r). */
export function replicaSeed(planSeed: number, replica: number): number {
  return Number(Rng.derive(planSeed, 'band-replica', replica).nextUint64() >> 11n);
}

/** The ideal run with its randomness kept: participation stays, compression and drops go. */
function replicaPlan(plan: RunPlan, seed: number): RunPlan {
  const ideal = noDropsPlan(idealPlan(plan));
  const scenario: Scenario = {
    ...ideal.scenario,
    seed,
    method: { ...ideal.scenario.method, participation: plan.scenario.method.participation },
  };
  return {
    ...ideal,
    scenario,
    planHash: hashOf({ scenario, methodConfig: ideal.methodConfig, dim: ideal.dim }),
  };
}

/**
 * f - f* after rounds 0..T of one replica, or null when it diverged (a non-finite or exploding
 * model: the band has no mean-square meaning there).
 */
function walkReplica(
  plan: RunPlan,
  seed: number,
  objectives: readonly Objective[],
  global: Objective,
  optimum: TrajectoryOptimum,
  initialModel: Float64Array,
): Float64Array | null {
  const rounds = plan.scenario.run.rounds;
  const replica = replicaPlan(plan, seed);
  const server = new ServerRuntime(replica, initialModel);
  const clients = objectives.map((objective, id) => new ClientRuntime(replica, id, objective));
  const transport = new DirectTransport(clients);
  const setup = {
    ...walkSetup(replica, server),
    speed: speedModelFor(plan.scenario.timing, plan.clientCount, plan.scenario.seed),
  };
  const values = new Float64Array(rounds + 1);
  const gap = () => evaluateModel(global, optimum.x, optimum.loss, server.model()).suboptimality;
  values[0] = gap();
  for (let round = 1; round <= rounds; round++) {
    if (driveSync(walkRound(setup, round), transport).diverged) return null;
    values[round] = gap();
    if (!Number.isFinite(values[round])) return null;
  }
  return values;
}

/** The q-quantile of sorted values, linear between order statistics (common practice). */
function quantileSorted(sorted: ArrayLike<number>, q: number): number {
  const position = q * (sorted.length - 1);
  const below = Math.floor(position);
  const above = Math.min(sorted.length - 1, below + 1);
  return sorted[below] + (position - below) * (sorted[above] - sorted[below]);
}

/** Mean, 95% t-interval of the mean and 2.5-97.5 percentile band of a sample. */
export function sampleBands(values: ArrayLike<number>): {
  mean: number;
  meanInterval: Interval;
  singleRunInterval: Interval;
} {
  const n = values.length;
  let mean = 0;
  for (let i = 0; i < n; i++) mean += values[i] / n;
  let squares = 0;
  for (let i = 0; i < n; i++) squares += (values[i] - mean) ** 2;
  const halfWidth = studentTQuantile975(n - 1) * Math.sqrt(squares / (n - 1) / n);
  const sorted = Float64Array.from(values).sort();
  return {
    mean,
    meanInterval: [mean - halfWidth, mean + halfWidth],
    singleRunInterval: [quantileSorted(sorted, 0.025), quantileSorted(sorted, 0.975)],
  };
}

/** The stationary part's rounds: the last STATIONARY_SHARE of 0..T, at least one round. */
export function stationaryWindow(rounds: number): Interval {
  return [Math.min(rounds, Math.ceil((1 - STATIONARY_SHARE) * rounds)), rounds];
}

/**
 * The band for `plan` (its blocker must be null: the caller asks bandBlocker first), or the reason
 * there is none when a replica diverges.
 */
export function monteCarloBand(
  plan: RunPlan,
  objectives: readonly Objective[],
  global: Objective,
  optimum: TrajectoryOptimum,
  options: BandOptions = {},
): MonteCarloBand | { unavailableReason: string } {
  const replicas = options.replicas ?? BAND_REPLICAS_DEFAULT;
  const blocker = bandBlocker(plan.scenario, plan.dim, replicas);
  if (blocker !== null) return { unavailableReason: blocker };
  const initialModel = options.initialModel ?? new Float64Array(plan.dim);
  const rounds = plan.scenario.run.rounds;
  const curves: Float64Array[] = [];
  for (let r = 0; r < replicas; r++) {
    const curve = walkReplica(
      plan,
      replicaSeed(plan.scenario.seed, r),
      objectives,
      global,
      optimum,
      initialModel,
    );
    if (curve === null)
      return { unavailableReason: `replica ${r} of the ideal run diverged: no mean-square band` };
    curves.push(curve);
  }
  const band: MonteCarloBand = {
    replicas,
    rounds: [],
    mean: [],
    meanLow: [],
    meanHigh: [],
    singleLow: [],
    singleHigh: [],
    stationary: { window: [0, 0], mean: 0, meanInterval: [0, 0], singleRunInterval: [0, 0] },
  };
  const column = new Float64Array(replicas);
  for (const round of thinIndices(rounds + 1, BAND_POINTS_MAX)) {
    for (let r = 0; r < replicas; r++) column[r] = curves[r][round];
    const at = sampleBands(column);
    band.rounds.push(round);
    band.mean.push(at.mean);
    band.meanLow.push(at.meanInterval[0]);
    band.meanHigh.push(at.meanInterval[1]);
    band.singleLow.push(at.singleRunInterval[0]);
    band.singleHigh.push(at.singleRunInterval[1]);
  }
  const window = stationaryWindow(rounds);
  for (let r = 0; r < replicas; r++) column[r] = windowAverage(curves[r], window);
  band.stationary = { window, ...sampleBands(column) };
  return band;
}

/** The mean of values[from..to] (indices are rounds). */
export function windowAverage(values: ArrayLike<number>, window: Interval): number {
  let sum = 0;
  for (let round = window[0]; round <= window[1]; round++) sum += values[round];
  return sum / (window[1] - window[0] + 1);
}
