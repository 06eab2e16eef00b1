// The oracle's work as piscina tasks, on pool threads so that a large problem never holds up the
// coordinator's message handling or a single core:
// - evaluateTask (default export): f(x) - f* and ||x - x*|| of a model, its held-out scores
//   (src/engine/held-out-evaluation.ts, on the test parts handed over with the shards), and the predicted
//   trajectory's f - f* after as many rounds (src/engine/predicted-trajectory.ts). The plan and
//   x*, f* come once, as the pool's workerData (OracleThreadData); the data comes once too, as the
//   coordinator's own shards (prepareTask, posted when the pool starts), so that the thread never
//   draws the data again. A thread that starts without them (piscina replaced it) rebuilds the
//   data from the scenario: the same bytes either way. Between tasks the thread walks the
//   trajectory ahead of the rounds (trajectory-ahead.ts);
// - clientConstantsTask: the constants of a range of clients (their own minimizers included),
//   given x*; the thread builds only those clients' shards.

import { workerData } from 'piscina';
import type { Scenario } from '../src/scenario/schema.js';
import {
  buildProblemInstance,
  clientObjective,
  objectiveSpecOf,
  problemInstanceOf,
} from '../src/data/problem-instance.js';
import type { ProblemInstance } from '../src/data/problem-instance.js';
import type { Shard } from '../src/problem/shard.js';
import { clientConstants, type ClientConstants } from '../src/theory/constants.js';
import { evaluateModel, type RoundEvaluation } from '../src/engine/evaluate.js';
import { HeldOutSet } from '../src/engine/held-out-evaluation.js';
import { PredictedTrajectory } from '../src/engine/predicted-trajectory.js';
import type { RunPlan } from '../src/engine/run-plan.js';
import { TrajectoryAhead } from './trajectory-ahead.js';

/** What an evaluating pool hands its thread once. */
export interface OracleThreadData {
  plan: RunPlan;
  /** x* and f*, solved once by the process that owns the pool */
  optimum: { x: Float64Array; loss: number };
}

/** The coordinator's shards, every client's in client order. */
export interface OraclePrepareTask {
  shards: Shard[];
  /** every client's test part, in client order */
  testShards: Shard[];
}

export interface OracleTask {
  model: Float64Array;
  /** the rounds the model has been through (0: the initial model) */
  round: number;
}

export interface ClientConstantsTask {
  scenario: Scenario;
  optimum: Float64Array;
  /** client ids from (inclusive) to (exclusive) */
  from: number;
  to: number;
}

interface OracleThreadState {
  data: OracleThreadData;
  instance: ProblemInstance;
  heldOut: HeldOutSet;
  ahead: TrajectoryAhead;
}

let state: OracleThreadState | null = null;
let walkScheduled = false;

function stateFor(instance: ProblemInstance): OracleThreadState {
  const data = workerData as OracleThreadData;
  const trajectory = new PredictedTrajectory(
    data.plan,
    instance.objectives,
    instance.global,
    data.optimum,
  );
  return {
    data,
    instance,
    heldOut: new HeldOutSet(objectiveSpecOf(data.plan.scenario), instance.testShards),
    ahead: new TrajectoryAhead(trajectory, data.plan.scenario.run),
  };
}

/** Walks one round ahead when the thread has nothing else to do, and again after it. */
function walkAheadWhenIdle(): void {
  if (walkScheduled || state === null || !state.ahead.hasWorkAhead()) return;
  walkScheduled = true;
  setImmediate(() => {
    walkScheduled = false;
    if (state === null || !state.ahead.hasWorkAhead()) return;
    state.ahead.walkOne();
    walkAheadWhenIdle();
  });
}

export function prepareTask(task: OraclePrepareTask): void {
  const { plan } = workerData as OracleThreadData;
  state = stateFor(problemInstanceOf(plan.scenario, task.shards, task.testShards));
  walkAheadWhenIdle();
}

export default function evaluateTask(task: OracleTask): RoundEvaluation {
  state ??= stateFor(buildProblemInstance((workerData as OracleThreadData).plan.scenario));
  const { instance, data, heldOut, ahead } = state;
  const evaluation = {
    ...evaluateModel(instance.global, data.optimum.x, data.optimum.loss, task.model),
    predictedSuboptimality: ahead.at(task.round),
    heldOut: heldOut.evaluate(task.model),
  };
  walkAheadWhenIdle();
  return evaluation;
}

export function clientConstantsTask(task: ClientConstantsTask): ClientConstants[] {
  const out: ClientConstants[] = [];
  for (let id = task.from; id < task.to; id++)
    out.push(clientConstants(clientObjective(task.scenario, id), task.optimum));
  return out;
}
