// Evaluation of models on a piscina pool (see oracle-task.ts). One thread: the oracle's problem
// is rebuilt once per thread, and rounds evaluate one model at a time.

import { Piscina } from 'piscina';
import type { Scenario } from '../src/scenario/schema.js';
import type { Evaluation } from '../src/engine/evaluate.js';
import { compiledModulePath } from '../runtime/compiled-module.js';
import type { OracleTask } from './oracle-task.js';

/** A pool thread unused this long exits; evaluations come every round, so it rarely does. */
const ORACLE_IDLE_TIMEOUT_MS = 60_000;

export class OraclePool {
  private readonly pool: Piscina<OracleTask, Evaluation>;
  private readonly scenario: Scenario;

  constructor(scenario: Scenario) {
    this.scenario = scenario;
    this.pool = new Piscina<OracleTask, Evaluation>({
      filename: compiledModulePath(import.meta.url, 'oracle-task.js'),
      minThreads: 1,
      maxThreads: 1,
      idleTimeout: ORACLE_IDLE_TIMEOUT_MS,
    });
  }

  evaluate(model: Float64Array): Promise<Evaluation> {
    return this.pool.run({ scenario: this.scenario, model });
  }

  async close(): Promise<void> {
    await this.pool.destroy();
  }
}
