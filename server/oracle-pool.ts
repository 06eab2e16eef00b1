// The oracle's piscina pools (tasks in oracle-task.ts). OraclePool evaluates models, one thread:
// rounds evaluate one model at a time. clientConstantsInParallel spreads the clients' constants
// over a pool as wide as the machine (at most CLIENT_CONSTANTS_THREADS_MAX threads).

import { availableParallelism } from 'node:os';
import { Piscina } from 'piscina';
import type { Scenario } from '../src/scenario/schema.js';
import type { RoundEvaluation } from '../src/engine/evaluate.js';
import type { RunPlan } from '../src/engine/run-plan.js';
import type { ClientConstants } from '../src/theory/constants.js';
import { theoryOf } from '../src/theory/plan-theory.js';
import { compiledModulePath } from '../runtime/compiled-module.js';
import type { ClientConstantsTask, OracleTask } from './oracle-task.js';

/** A pool thread unused this long exits; evaluations come every round, so it rarely does. */
const ORACLE_IDLE_TIMEOUT_MS = 60_000;
/** Threads for the clients' constants: one per core, within this bound. */
const CLIENT_CONSTANTS_THREADS_MAX = 8;

export class OraclePool {
  private readonly pool: Piscina<OracleTask, RoundEvaluation>;
  private readonly plan: RunPlan;
  private readonly optimum: { x: Float64Array; loss: number };

  /** x* and f* come from this process's oracle (theoryOf), solved or read once. */
  constructor(plan: RunPlan) {
    this.plan = plan;
    const { x, loss } = theoryOf(plan.scenario).optimum;
    this.optimum = { x, loss };
    this.pool = new Piscina<OracleTask, RoundEvaluation>({
      filename: compiledModulePath(import.meta.url, 'oracle-task.js'),
      minThreads: 1,
      maxThreads: 1,
      idleTimeout: ORACLE_IDLE_TIMEOUT_MS,
    });
  }

  /** The model after `round` rounds, and the predicted trajectory there (rounds asked in order cost one ideal round each). */
  evaluate(model: Float64Array, round: number): Promise<RoundEvaluation> {
    return this.pool.run({ plan: this.plan, model, round, optimum: this.optimum });
  }

  async close(): Promise<void> {
    await this.pool.destroy();
  }
}

/**
 * Every client's constants against x*, in client order, computed on pool threads: the clients
 * are cut into one contiguous range per thread, balanced by sample count.
 */
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
