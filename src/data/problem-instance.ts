// Every client's objective and weight for a scenario, built from the shards that the plan
// determines. The testbed's oracle and the in-process engine see all clients; a worker builds
// only the clients it hosts (clientObjective). A process handed the shards of an instance built
// elsewhere (the coordinator's oracle thread) makes the same instance from them
// (problemInstanceOf) instead of drawing the data again. The clients' test parts ride along for
// the held-out evaluation; nothing in the objectives sees them.

import type { Scenario } from '../scenario/schema.js';
import { buildAllShards, buildAllTestShards, buildShard } from './build-shard.js';
import { createObjective } from '../problem/create-objective.js';
import type { ClientObjective, Objective, ObjectiveSpec } from '../problem/objective.js';
import type { Shard } from '../problem/shard.js';
import { WeightedSumObjective } from '../problem/weighted-sum.js';

export interface ProblemInstance {
  dim: number;
  objectives: ClientObjective[];
  /** p_i, summing to 1 */
  weights: Float64Array;
  sampleCounts: number[];
  /** f = sum_i p_i f_i */
  global: Objective;
  /** every client's test part, in client order (no rows when nothing is held out) */
  testShards: Shard[];
}

export function objectiveSpecOf(scenario: Scenario): ObjectiveSpec {
  return {
    kind: scenario.problem.kind,
    regularization: scenario.problem.regularization,
    classes: scenario.problem.classes,
    hiddenWidths: scenario.problem.hiddenWidths,
    activation: scenario.problem.activation,
  };
}

/** p_i: by sample count (n_i / n) or uniform (1/m), as the scenario says. */
export function clientWeights(scenario: Scenario, sampleCounts: readonly number[]): Float64Array {
  const m = sampleCounts.length;
  const weights = new Float64Array(m);
  if (scenario.clients.weights === 'uniform') {
    weights.fill(1 / m);
    return weights;
  }
  let total = 0;
  for (const n of sampleCounts) total += n;
  for (let i = 0; i < m; i++) weights[i] = sampleCounts[i] / total;
  return weights;
}

export function clientObjective(scenario: Scenario, clientId: number): ClientObjective {
  return createObjective(objectiveSpecOf(scenario), buildShard(scenario, clientId));
}

export function buildProblemInstance(scenario: Scenario): ProblemInstance {
  return problemInstanceOf(scenario, buildAllShards(scenario));
}

/** The instance of `scenario` over its training shards and test parts (every client's, in client order). */
export function problemInstanceOf(
  scenario: Scenario,
  shards: readonly Shard[],
  testShards: Shard[] = buildAllTestShards(scenario),
): ProblemInstance {
  if (shards.length !== scenario.clients.count)
    throw new RangeError(`${scenario.clients.count} shards expected, got ${shards.length}`);
  const spec = objectiveSpecOf(scenario);
  const objectives = shards.map((shard) => createObjective(spec, shard));
  const sampleCounts = shards.map((s) => s.sampleCount);
  const weights = clientWeights(scenario, sampleCounts);
  return {
    dim: objectives[0].dim,
    objectives,
    weights,
    sampleCounts,
    global: new WeightedSumObjective(objectives, weights),
    testShards,
  };
}
