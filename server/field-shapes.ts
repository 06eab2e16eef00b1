// The vectors each exchange of a method moves, with their dimensions, for validating what a
// worker sends. Methods do not declare their fields; the coordinator learns them by driving a
// throwaway copy of the method through one round with a single client (one local step, full
// gradient), so the table can never drift from what the method really sends.

import type { Objective } from '../src/problem/objective.js';
import type { FieldDims } from '../src/protocol/index.js';
import type { RunPlan } from '../src/engine/run-plan.js';
import { methodByName } from '../src/algorithm/registry.js';

export interface FieldShapes {
  /** exchange -> field -> dimension, server to worker */
  down: FieldDims;
  /** exchange -> field -> dimension, worker to server */
  up: FieldDims;
}

function dimsOf(fields: Record<string, Float64Array>): Record<string, number> {
  const out: Record<string, number> = {};
  for (const [name, v] of Object.entries(fields)) out[name] = v.length;
  return out;
}

/** Probes the plan's method with `objective` (any client's; only its dimension matters). */
export function fieldShapesFor(plan: RunPlan, objective: Objective): FieldShapes {
  const method = methodByName(plan.scenario.method.name);
  const server = method.initServer(plan.dim, plan.methodConfig, new Float64Array(plan.dim));
  const client = method.initClient(plan.dim, plan.methodConfig, 0);
  const down: Record<string, Record<string, number>> = {};
  const up: Record<string, Record<string, number>> = {};
  const stepSize = plan.methodConfig.stepSize;
  for (const exchange of method.exchanges) {
    const sent = method.broadcast(server, exchange);
    down[exchange] = dimsOf(sent);
    const returned = method.work(client, objective, sent, { localSteps: 1, stepSize, sampler: null }, exchange);
    up[exchange] = dimsOf(returned);
    method.aggregate(server, [{ clientId: 0, weight: 1, localSteps: 1, stepSize, fields: returned }], exchange);
  }
  return { down, up };
}
