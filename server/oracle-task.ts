// The oracle's work as piscina tasks, on pool threads so that a large problem never holds up the
// coordinator's message handling or a single core:
// - evaluateTask (default export): f(x) - f* and ||x - x*|| of a model, given x* and f* (the
//   thread rebuilds the problem's data from the scenario once, and never solves it again);
// - clientConstantsTask: the constants of a range of clients (their own minimizers included),
//   given x*; the thread builds only those clients' shards.

import type { Scenario } from '../src/scenario/schema.js';
import { buildProblemInstance, clientObjective } from '../src/data/problem-instance.js';
import type { ProblemInstance } from '../src/data/problem-instance.js';
import { problemHashOf } from '../src/theory/plan-theory.js';
import { clientConstants, type ClientConstants } from '../src/theory/constants.js';
import { evaluateModel, type Evaluation } from '../src/engine/evaluate.js';

export interface OracleTask {
  scenario: Scenario;
  model: Float64Array;
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

export default function evaluateTask(task: OracleTask): Evaluation {
  const { global } = instanceOf(task.scenario);
  return evaluateModel(global, task.optimum.x, task.optimum.loss, task.model);
}

export function clientConstantsTask(task: ClientConstantsTask): ClientConstants[] {
  const out: ClientConstants[] = [];
  for (let id = task.from; id < task.to; id++)
    out.push(clientConstants(clientObjective(task.scenario, id), task.optimum));
  return out;
}
