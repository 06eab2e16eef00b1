// One client's work as a piscina task: the client's state travels in as a snapshot and back
// out as one, so that a worker hosting many clients computes them on several threads while
// every client continues bit for bit. Each thread serves a fixed set of clients
// (thread-clients.ts): the plan and those clients' ids come once, as the pool's workerData
// (ClientThreadData), and the thread builds each of its clients' shards once, all of them at
// start (prepareTask, posted when the pool starts) so that building overlaps the coordinator's
// own start; a task carries only the exchange.

import { performance } from 'node:perf_hooks';
import { workerData } from 'piscina';
import {
  ClientRuntime,
  type ClientRuntimeSnapshot,
  type EncodedFields,
} from '../src/engine/client-runtime.js';
import type { WirePlan } from '../src/engine/run-plan.js';
import type { Objective } from '../src/problem/objective.js';
import { clientObjective } from '../src/data/problem-instance.js';
import { isNonFiniteError } from '../src/base/coded-error.js';

/** What a client pool hands each of its threads once. */
export interface ClientThreadData {
  plan: WirePlan;
  /** the clients this thread computes, and no other */
  clientIds: number[];
}

export interface ClientTask {
  clientId: number;
  /** null: the client's first exchange */
  snapshot: ClientRuntimeSnapshot | null;
  round: number;
  exchange: string;
  encodedDown: EncodedFields;
  localSteps: number;
  stepSize: number;
}

export interface ClientTaskResult {
  snapshot: ClientRuntimeSnapshot;
  encodedUp: EncodedFields;
  stepsTaken: number;
  /** real seconds the work took on the thread */
  measuredSeconds: number;
}

/**
 * A client whose update is no longer finite (it diverged). Said as data: an error's code does
 * not survive the trip back from a pool thread, and the coordinator needs it to stop the run.
 */
export interface ClientTaskNonFinite {
  nonFinite: string;
}

/** This thread's clients' objectives, built once each. */
const objectives = new Map<number, Objective>();

function objectiveFor(clientId: number): Objective {
  const { plan, clientIds } = workerData as ClientThreadData;
  let objective = objectives.get(clientId);
  if (objective === undefined) {
    if (!clientIds.includes(clientId))
      throw new RangeError(`client ${clientId} is not computed on this thread`);
    objective = clientObjective(plan.scenario, clientId);
    objectives.set(clientId, objective);
  }
  return objective;
}

/** Builds every shard of this thread's clients. */
export function prepareTask(): void {
  for (const clientId of (workerData as ClientThreadData).clientIds) objectiveFor(clientId);
}

/** One exchange of one client from its snapshot: what a pool thread runs for a task. */
export function runClientTask(
  plan: WirePlan,
  objective: Objective,
  task: ClientTask,
): ClientTaskResult | ClientTaskNonFinite {
  const runtime = new ClientRuntime(plan, task.clientId, objective);
  if (task.snapshot !== null) runtime.restore(task.snapshot);
  const started = performance.now();
  let result;
  try {
    result = runtime.work(
      task.round,
      task.exchange,
      task.encodedDown,
      task.localSteps,
      task.stepSize,
    );
  } catch (error) {
    if (isNonFiniteError(error)) return { nonFinite: (error as Error).message };
    throw error;
  }
  const measuredSeconds = (performance.now() - started) / 1000;
  return {
    snapshot: runtime.snapshot(),
    encodedUp: result.encodedUp,
    stepsTaken: result.stepsTaken,
    measuredSeconds,
  };
}

export default function clientTask(task: ClientTask): ClientTaskResult | ClientTaskNonFinite {
  const { plan } = workerData as ClientThreadData;
  return runClientTask(plan, objectiveFor(task.clientId), task);
}
