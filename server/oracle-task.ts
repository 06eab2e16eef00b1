// The oracle's evaluation as a piscina task: f(x) - f* and ||x - x*|| on a pool thread, so that
// evaluating a large problem never holds up the coordinator's message handling. The thread
// rebuilds the problem from the scenario once (theoryOf caches it per problem hash).

import type { Scenario } from '../src/scenario/schema.js';
import { theoryOf } from '../src/theory/plan-theory.js';
import { evaluateModel, type Evaluation } from '../src/engine/evaluate.js';

export interface OracleTask {
  scenario: Scenario;
  model: Float64Array;
}

export default function evaluateTask(task: OracleTask): Evaluation {
  const theory = theoryOf(task.scenario);
  return evaluateModel(theory.instance.global, theory.optimum.x, theory.optimum.loss, task.model);
}
