// The vectors each exchange of a method moves, with their dimensions, for validating what a
// worker sends. Methods do not declare their fields; the coordinator reads them off one round of
// the round walk itself (src/engine/round-walk.ts) over the plan's ideal twin, with client 0
// alone taking one local step, so the table can never drift from what a run really sends.

import type { Objective } from '../src/problem/objective.js';
import type { FieldDims } from '../src/protocol/index.js';
import type { RunPlan } from '../src/engine/run-plan.js';
import { ClientRuntime, type EncodedFields } from '../src/engine/client-runtime.js';
import { DirectTransport } from '../src/engine/direct-transport.js';
import { idealPlan } from '../src/engine/ideal-plan.js';
import { walkRound, walkSetup } from '../src/engine/round-walk.js';
import { ServerRuntime } from '../src/engine/server-runtime.js';
import { driveSync, type ExchangeOrder, type ExchangeReply } from '../src/engine/walk-transport.js';

export interface FieldShapes {
  /** exchange -> field -> dimension, server to worker */
  down: FieldDims;
  /** exchange -> field -> dimension, worker to server */
  up: FieldDims;
}

function dimsOf(fields: EncodedFields): Record<string, number> {
  const out: Record<string, number> = {};
  for (const [name, cv] of Object.entries(fields)) out[name] = cv.dim;
  return out;
}

/** Direct calls to client 0 that note the fields crossing each way. */
class ShapeProbe extends DirectTransport {
  readonly down: Record<string, Record<string, number>> = {};
  readonly up: Record<string, Record<string, number>> = {};

  override exchange(order: ExchangeOrder): ExchangeReply {
    const reply = super.exchange(order);
    for (const { assignment, encodedDown } of order.downs) {
      this.down[order.exchange] = dimsOf(encodedDown);
      const returned = reply.returns.get(assignment.clientId);
      if (returned?.kind === 'up') this.up[order.exchange] = dimsOf(returned.encodedUp);
    }
    return reply;
  }
}

/** Probes the plan's method with `objective` (client 0's; only its dimension matters). */
export function fieldShapesFor(plan: RunPlan, objective: Objective): FieldShapes {
  const ideal = idealPlan(plan);
  // One step under a policy that keeps it: the probe's cost stays that of one gradient.
  const probePlan: RunPlan = {
    ...ideal,
    scenario: { ...ideal.scenario, timing: { ...ideal.scenario.timing, policy: { kind: 'all' } } },
    plannedSteps: new Int32Array(plan.clientCount).fill(1),
  };
  const probe = new ShapeProbe([new ClientRuntime(probePlan, 0, objective)]);
  const server = new ServerRuntime(probePlan);
  driveSync(walkRound(walkSetup(probePlan, server), 1), probe);
  // In the method's exchange order: a round frame names its exchange by its index here.
  const ordered = (dims: FieldDims): FieldDims =>
    Object.fromEntries(
      server.method.exchanges.filter((e) => Object.hasOwn(dims, e)).map((e) => [e, dims[e]]),
    );
  return { down: ordered(probe.down), up: ordered(probe.up) };
}
