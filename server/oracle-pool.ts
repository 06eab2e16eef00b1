// The oracle's piscina pools (tasks in oracle-task.ts). OraclePool evaluates models, one thread:
// rounds evaluate one model at a time. The thread gets the plan and x*, f* once (workerData) and
// the coordinator's own shards once, copied out of its kernel memory and moved, not cloned, to
// the thread as soon as the pool starts: the thread builds its objectives from them while the
// workers start and join, instead of drawing the whole data set again at the first evaluation.
// The thread runs without piscina's atomics wait so that its event loop turns between tasks,
// when it walks the predicted trajectory ahead (trajectory-ahead.ts).
// clientConstantsInParallel spreads the clients' constants over a pool as wide as the machine
// (at most CLIENT_CONSTANTS_THREADS_MAX threads).

import { availableParallelism } from 'node:os';
import { Piscina } from 'piscina';
import type { Scenario } from '../src/scenario/schema.js';
import type { RoundEvaluation } from '../src/engine/evaluate.js';
import type { RunPlan } from '../src/engine/run-plan.js';
import type { ClientConstants } from '../src/theory/constants.js';
import type { PlanTheory } from '../src/theory/plan-theory.js';
import type { Shard } from '../src/problem/shard.js';
import { compiledModulePath } from '../runtime/compiled-module.js';
import type {
  ClientConstantsTask,
  OraclePrepareTask,
  OracleTask,
  OracleThreadData,
} from './oracle-task.js';

/** A pool thread unused this long exits; evaluations come every round, so it rarely does. */
const ORACLE_IDLE_TIMEOUT_MS = 60_000;
/** Threads for the clients' constants: one per core, within this bound. */
const CLIENT_CONSTANTS_THREADS_MAX = 8;

/** A copy of the shard with buffers of its own, to move to another thread. */
function movableShard(shard: Shard): Shard {
  return { ...shard, features: shard.features.slice(), targets: shard.targets.slice() };
}

export class OraclePool {
  /** prepareTask answers nothing (undefined), evaluateTask an evaluation */
  private readonly pool: Piscina<OracleTask | OraclePrepareTask, RoundEvaluation | undefined>;
  /** the hand-over of the shards; a failure there fails every evaluation */
  private readonly prepared: Promise<unknown>;

  /** x* and f* come from this process's oracle (theory), whose instance the thread is given. */
  constructor(plan: RunPlan, theory: PlanTheory) {
    const { x, loss } = theory.optimum;
    const threadData: OracleThreadData = { plan, optimum: { x, loss } };
    this.pool = new Piscina<OracleTask | OraclePrepareTask, RoundEvaluation | undefined>({
      filename: compiledModulePath(import.meta.url, 'oracle-task.js'),
      minThreads: 1,
      maxThreads: 1,
      idleTimeout: ORACLE_IDLE_TIMEOUT_MS,
      atomics: 'disabled',
      workerData: threadData,
    });
    const shards = theory.instance.objectives.map((objective) => movableShard(objective.shard));
    const testShards = theory.instance.testShards.map(movableShard);
    const task: OraclePrepareTask = { shards, testShards };
    this.prepared = this.pool.run(task, {
      name: 'prepareTask',
      transferList: [...shards, ...testShards].flatMap((s) => [
        s.features.buffer as ArrayBuffer,
        s.targets.buffer as ArrayBuffer,
      ]),
    });
    // Handled here so that a failure before the first evaluation is no unhandled rejection; every
    // evaluation awaits it and fails with it.
    this.prepared.catch(() => undefined);
  }

  /** The model after `round` rounds, and the predicted trajectory there (rounds asked in order cost one ideal round each). */
  async evaluate(model: Float64Array, round: number): Promise<RoundEvaluation> {
    await this.prepared;
    const evaluation = await this.pool.run({ model, round });
    if (evaluation === undefined) throw new Error('the oracle thread answered no evaluation');
    return evaluation;
  }

  async close(): Promise<void> {
    await this.pool.destroy();
  }
}
export async function clientConstantsInParallel(
  scenario: Scenario,
  optimum: Float64Array,
  sampleCounts: readonly number[],
): Promise<ClientConstants[]> {
  const threads = Math.max(
    1,
    Math.min(CLIENT_CONSTANTS_THREADS_MAX, availableParallelism(), sampleCounts.length),
  );
  const total = sampleCounts.reduce((a, b) => a + b, 0);
  const ranges: [number, number][] = [];
  let from = 0;
  let accumulated = 0;
  for (let id = 0; id < sampleCounts.length; id++) {
    accumulated += sampleCounts[id];
    const last = id === sampleCounts.length - 1;
    if (last || accumulated >= (total * (ranges.length + 1)) / threads) {
      ranges.push([from, id + 1]);
      from = id + 1;
    }
  }
  const pool = new Piscina<ClientConstantsTask, ClientConstants[]>({
    filename: compiledModulePath(import.meta.url, 'oracle-task.js'),
    name: 'clientConstantsTask',
    minThreads: threads,
    maxThreads: threads,
  });
  try {
    const parts = await Promise.all(
      ranges.map(([start, end]) => pool.run({ scenario, optimum, from: start, to: end })),
    );
    return parts.flat();
  } finally {
    await pool.destroy();
  }
}
