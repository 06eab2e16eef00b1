// The in-process engine: the round walk (round-walk.ts) with every client in this process,
// answered by direct calls, and time taken from the models (virtual clock). The coordinator
// walks the very same rounds over its WebSocket sessions.

import { performance } from 'node:perf_hooks';
import type { Scenario } from '../scenario/schema.js';
import { theoryOf, type PlanTheory } from '../theory/plan-theory.js';
import { ClientRuntime } from './client-runtime.js';
import { DirectTransport } from './direct-transport.js';
import { evaluateModel, type Evaluation } from './evaluate.js';
import { walkRun, walkSetup } from './round-walk.js';
import type { RecordSink, RoundRecord } from './round-record.js';
import { assertPlannable, resolveRunPlan, type RunPlan } from './run-plan.js';
import type { RunOutcome } from './run-summary.js';
import { ServerRuntime } from './server-runtime.js';
import { driveSync, type RoundTransport } from './walk-transport.js';

export interface EngineOptions {
  /** called after every round, e.g. for a live progress line */
  onRound?: (record: RoundRecord) => void;
  /**
   * Opens where the records go as they happen, once the plan is made (a scenario the plan
   * refuses opens nothing); without it the records are not kept.
   */
  openRecords?: () => RecordSink;
  /** the server's starting model x_0 (default zero) */
  initialModel?: Float64Array;
}

/** The run's end; its records went to the sink openRecords opened. */
export type EngineResult = RunOutcome;

/** The plan and the oracle's theory of a scenario; refuses a scenario no runtime can run before the oracle works. */
export function planFor(scenario: Scenario): { plan: RunPlan; theory: PlanTheory } {
  assertPlannable(scenario);
  const theory = theoryOf(scenario);
  const plan = resolveRunPlan(scenario, {
    dim: theory.instance.dim,
    weights: theory.instance.weights,
    smoothness: theory.constants.smoothness,
  });
  return { plan, theory };
}

/** Direct calls, evaluated by the oracle here; nothing ever leaves the run or stops it early. */
class InProcessTransport extends DirectTransport implements RoundTransport {
  private readonly evaluateModel: (x: Float64Array) => Evaluation;

  constructor(clients: readonly ClientRuntime[], evaluate: (x: Float64Array) => Evaluation) {
    super(clients);
    this.evaluateModel = evaluate;
  }

  openRound(): null {
    return null;
  }

  closeRound(): null {
    return null;
  }

  evaluate(model: Float64Array): Evaluation {
    return this.evaluateModel(model);
  }
}

/** Runs a scenario to its target or its round limit, entirely in this process. */
export function runInProcess(scenario: Scenario, options: EngineOptions = {}): EngineResult {
  const started = performance.now();
  const wallSeconds = () => (performance.now() - started) / 1000;
  const { plan, theory } = planFor(scenario);
  const server = new ServerRuntime(plan, options.initialModel);
  const clients = theory.instance.objectives.map(
    (objective, id) => new ClientRuntime(plan, id, objective),
  );
  const transport = new InProcessTransport(clients, (x) =>
    evaluateModel(theory.instance.global, theory.optimum.x, theory.optimum.loss, x),
  );
  const { onRound } = options;
  const records = options.openRecords?.();
  const walked = driveSync(
    walkRun({
      ...walkSetup(plan, server),
      wallSeconds,
      onRound: (record, clientRecords) => {
        records?.append(record, clientRecords);
        onRound?.(record);
      },
    }),
    transport,
  );
  return {
    plan,
    theory,
    finalModel: walked.finalModel,
    stopReason: walked.stopReason,
    wallSeconds: wallSeconds(),
  };
}
