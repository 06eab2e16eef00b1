// The oracle's work as piscina tasks, on pool threads so that a large problem never holds up the
// coordinator's message handling or a single core:
// - evaluateTask (default export): f(x) - f* and ||x - x*|| of a model, given x* and f* (the
//   thread rebuilds the problem's data from the scenario once, and never solves it again), and
//   the predicted trajectory's f - f* after as many rounds (src/engine/predicted-trajectory.ts),
//   kept on the thread so that rounds asked in order cost one ideal round each;
// - clientConstantsTask: the constants of a range of clients (their own minimizers included),
//   given x*; the thread builds only those clients' shards.

import type { Scenario } from '../src/scenario/schema.js';
import { buildProblemInstance, clientObjective } from '../src/data/problem-instance.js';
import type { ProblemInstance } from '../src/data/problem-instance.js';
import { problemHashOf } from '../src/theory/plan-theory.js';
import { clientConstants, type ClientConstants } from '../src/theory/constants.js';
import { evaluateModel, type RoundEvaluation } from '../src/engine/evaluate.js';
import { PredictedTrajectory } from '../src/engine/predicted-trajectory.js';
import type { RunPlan } from '../src/engine/run-plan.js';

export interface OracleTask {
  plan: RunPlan;
  model: Float64Array;
  /** the rounds the model has been through (0: the initial model) */
  round: number;
  /** x* and f*, solved once by the process that owns the pool */
  optimum: { x: Float64Array; loss: number };
}

export interface ClientConstantsTask {
  scenario: Scenario;
  optimum: Float64Array;
  /** client ids from (inclusive) to (exclusive) */
  from: number;
  to: number;
}

let instance: { problemHash: string; value: ProblemInstance } | null = null;

function instanceOf(scenario: Scenario): ProblemInstance {
  const problemHash = problemHashOf(scenario);
  if (instance?.problemHash !== problemHash)
    instance = { problemHash, value: buildProblemInstance(scenario) };
  return instance.value;
}

let trajectory: { planHash: string; value: PredictedTrajectory } | null = null;

export default function evaluateTask(task: OracleTask): RoundEvaluation {
  const { global, objectives } = instanceOf(task.plan.scenario);
  if (trajectory?.planHash !== task.plan.planHash)
    trajectory = {
      planHash: task.plan.planHash,
      value: new PredictedTrajectory(task.plan, objectives, global, task.optimum),
    };
  return {
    ...evaluateModel(global, task.optimum.x, task.optimum.loss, task.model),
    predictedSuboptimality: trajectory.value.at(task.round),
  };
}

export function clientConstantsTask(task: ClientConstantsTask): ClientConstants[] {
  const out: ClientConstants[] = [];
  for (let id = task.from; id < task.to; id++)
    out.push(clientConstants(clientObjective(task.scenario, id), task.optimum));
  return out;
}
