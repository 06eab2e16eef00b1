// The vectors a worker's clients receive in each exchange, with their dimensions, read off the
// method's own broadcast from its initial server state: a method broadcasts the same fields
// every round, and downlink compression keeps each field's name and dimension. The worker hands
// this table to receiveMessage (fieldDims), which checks every down against it.

import type { FieldDims } from '../protocol/field-dims.js';
import { methodByName } from '../algorithm/registry.js';
import type { WirePlan } from './run-plan.js';

export function downFieldDimsFor(plan: WirePlan): FieldDims {
  const method = methodByName(plan.scenario.method.name);
  const server = method.initServer(plan.dim, plan.methodConfig, new Float64Array(plan.dim));
  const dims: Record<string, Record<string, number>> = {};
  for (const exchange of method.exchanges) {
    const fields = method.broadcast(server, exchange);
    dims[exchange] = Object.fromEntries(
      Object.entries(fields).map(([name, vector]) => [name, vector.length]),
    );
  }
  return dims;
}
