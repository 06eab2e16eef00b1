// One client's work as a piscina task: the client's state travels in as a snapshot and back
// out as one, so that a worker hosting many clients computes them on several threads while
// every client continues bit for bit. Objectives (the shards) are built once per thread.

import { performance } from 'node:perf_hooks';
import {
  ClientRuntime,
  type ClientRuntimeSnapshot,
  type EncodedFields,
} from '../src/engine/client-runtime.js';
import type { WirePlan } from '../src/engine/run-plan.js';
import type { Objective } from '../src/problem/objective.js';
import { clientObjective } from '../src/data/problem-instance.js';
import { isNonFiniteError } from '../src/base/coded-error.js';

export interface ClientTask {
  plan: WirePlan;
  /** identifies the plan for the thread's objective cache */
  planKey: string;
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

/** Objectives kept per thread; a worker hosts at most its capacity's worth. */
const OBJECTIVE_CACHE_ENTRIES_MAX = 1024;
const objectives = new Map<string, Objective>();

function objectiveFor(task: ClientTask): Objective {
  const key = `${task.planKey}:${task.clientId}`;
  let objective = objectives.get(key);
  if (objective === undefined) {
    objective = clientObjective(task.plan.scenario, task.clientId);
    objectives.set(key, objective);
    if (objectives.size > OBJECTIVE_CACHE_ENTRIES_MAX)
      objectives.delete(objectives.keys().next().value as string);
  }
  return objective;
}

export default function clientTask(task: ClientTask): ClientTaskResult | ClientTaskNonFinite {
  const runtime = new ClientRuntime(task.plan, task.clientId, objectiveFor(task));
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
