// The client state of the methods whose client keeps nothing between rounds but buffers
// (gd, FedAvg, FedNova): allocated once so that no local step allocates.

import type { Objective } from '../problem/objective.js';
import {
  assertBudget,
  assertClientId,
  assertConfig,
  assertObjectiveDimension,
  requireField,
} from './invariants.js';
import { descend, freshDifference } from './local-descent.js';
import type { Budget, MethodConfig } from './method.js';
import type { Fields } from '../vec/fields.js';

export interface LocalClientState {
  dim: number;
  clientId: number;
  /** y, the local iterate */
  iterate: Float64Array;
  /** gradient work buffer */
  gradient: Float64Array;
}

export function initLocalClient(
  dim: number,
  cfg: MethodConfig,
  clientId: number,
): LocalClientState {
  assertConfig(dim, cfg);
  assertClientId(clientId, cfg);
  return { dim, clientId, iterate: new Float64Array(dim), gradient: new Float64Array(dim) };
}

/**
 * y <- x from the down field "model", `steps` plain gradient steps of size budget.stepSize,
 * and the upload { delta: y - x } (a fresh array).
 */
export function localDescentDelta(
  client: LocalClientState,
  objective: Objective,
  down: Fields,
  budget: Budget,
  steps: number,
): Fields {
  assertObjectiveDimension(objective, client.dim);
  assertBudget(budget);
  const x = requireField(down, 'model', client.dim);
  client.iterate.set(x);
  descend(objective, budget.sampler, client.iterate, steps, budget.stepSize, null, client.gradient);
  return { delta: freshDifference(client.iterate, x) };
}
