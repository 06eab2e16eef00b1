// Where a run is minibatch gradient descent on least squares, the closed-form stationary floor
// of its ideal run (src/theory/minibatch-lyapunov.ts). What the method really does: every client
// takes ONE step on its own batch of min(b, n_i) samples from the server model and the server
// averages with the weights p_i, so x+ = x - eta_g eta sum_i p_i g_{B_i}(x). That is gd, and
// FedAvg with tau_i = 1 for every client, under full participation; with partial participation
// or more local steps the round is not this map and the closed form is not given (the Monte Carlo
// band still is).

import type { Objective } from '../problem/objective.js';
import { LeastSquaresObjective } from '../problem/least-squares.js';
import {
  minibatchFloorSizeBlocker,
  minibatchGdFloor,
  type MinibatchShard,
} from '../theory/minibatch-lyapunov.js';
import { TheoryError } from '../theory/theory-error.js';
import type { RunPlan } from './run-plan.js';

/** Why the closed form does not describe this plan's ideal run, or null. */
export function minibatchFloorBlocker(
  plan: RunPlan,
  objectives: readonly Objective[],
): string | null {
  const { method, problem } = plan.scenario;
  if (problem.kind !== 'least-squares') return 'the closed form is for least squares only';
  if (method.gradient === 'full') return 'full gradients leave no minibatch noise';
  if (method.participation < 1)
    return 'partial participation: the closed form covers full participation only';
  if (method.name !== 'gd' && method.name !== 'fedavg')
    return `the closed form covers gd and fedavg with one local step, not ${method.name}`;
  if (
    plan.plannedSteps.some((steps) => steps !== 1) &&
    (method.name === 'fedavg' || method.stepPolicy !== 'fixed')
  )
    return 'the closed form covers one local step of the full step size per client and round';
  if (!objectives.every((objective) => objective instanceof LeastSquaresObjective))
    return 'the closed form needs the least-squares shards';
  const samples = objectives.reduce((total, objective) => total + objective.sampleCount, 0);
  return minibatchFloorSizeBlocker(plan.dim, samples);
}

export type MinibatchFloorPrediction = { floor: number } | { unavailableReason: string };

/** The closed-form E[f - f*] floor of the plan's ideal run, or why there is none. */
export function predictMinibatchFloor(
  plan: RunPlan,
  objectives: readonly Objective[],
  optimumX: Float64Array,
): MinibatchFloorPrediction {
  const blocker = minibatchFloorBlocker(plan, objectives);
  if (blocker !== null) return { unavailableReason: blocker };
  const gradient = plan.scenario.method.gradient as { minibatch: number };
  const leastSquares = objectives as readonly LeastSquaresObjective[];
  const shards: MinibatchShard[] = leastSquares.map((objective, i) => ({
    features: objective.shard.features,
    targets: objective.shard.targets,
    sampleCount: objective.sampleCount,
    batchSize: Math.min(gradient.minibatch, objective.sampleCount),
    weight: plan.weights[i],
  }));
  try {
    const { floor } = minibatchGdFloor({
      dim: plan.dim,
      shards,
      regularization: leastSquares[0].regularization,
      optimum: optimumX,
      stepSize: plan.methodConfig.serverStepSize * plan.methodConfig.stepSize,
    });
    return { floor };
  } catch (error) {
    if (error instanceof TheoryError) return { unavailableReason: error.message };
    throw error;
  }
}
