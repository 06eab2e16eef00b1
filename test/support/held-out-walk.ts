// The round walk driven over a scenario's clients with direct calls, as the in-process engine
// does, but without the oracle: tests that assert held-out accuracy need no x*, and on the
// digits the oracle's Newton solve costs far more than the rounds. The walk watches f - f* for
// divergence; here f(x) itself (f* taken as 0, x* as 0) stands in for it, which is at least the
// gap, so a diverging run is still stopped. Evaluated only at round 0 and at the last round
// unless run.evalEvery says otherwise.

import { buildProblemInstance, objectiveSpecOf } from '../../src/data/problem-instance.js';
import { ClientRuntime } from '../../src/engine/client-runtime.js';
import { DirectTransport } from '../../src/engine/direct-transport.js';
import { evaluateModel, type RoundEvaluation } from '../../src/engine/evaluate.js';
import { HeldOutSet } from '../../src/engine/held-out-evaluation.js';
import { resolveRunPlan } from '../../src/engine/run-plan.js';
import { walkRun, walkSetup } from '../../src/engine/round-walk.js';
import { ServerRuntime } from '../../src/engine/server-runtime.js';
import { driveSync, type RoundTransport } from '../../src/engine/walk-transport.js';
import type { Scenario } from '../../src/scenario/schema.js';
import { RecordList } from './record-list.js';

class HeldOutTransport extends DirectTransport implements RoundTransport {
  private readonly score: (x: Float64Array) => RoundEvaluation;

  constructor(clients: ClientRuntime[], score: (x: Float64Array) => RoundEvaluation) {
    super(clients);
    this.score = score;
  }

  openRound(): null {
    return null;
  }

  closeRound(): null {
    return null;
  }

  evaluate(model: Float64Array): RoundEvaluation {
    return this.score(model);
  }

  checkpoint(): void {}
}

/** The records of `scenario` walked to its last round (its step size must be a number). */
export function walkWithoutOracle(scenario: Scenario): RecordList {
  const instance = buildProblemInstance(scenario);
  const plan = resolveRunPlan(scenario, {
    dim: instance.dim,
    weights: instance.weights,
    smoothness: Number.NaN,
  });
  const heldOut = new HeldOutSet(objectiveSpecOf(scenario), instance.testShards);
  const origin = new Float64Array(instance.dim);
  const clients = instance.objectives.map(
    (objective, id) => new ClientRuntime(plan, id, objective),
  );
  const transport = new HeldOutTransport(clients, (x) => ({
    ...evaluateModel(instance.global, origin, 0, x),
    predictedSuboptimality: null,
    heldOut: heldOut.evaluate(x),
  }));
  const records = new RecordList();
  driveSync(
    walkRun({
      ...walkSetup(plan, new ServerRuntime(plan)),
      wallSeconds: () => 0,
      onRound: (record, clientRecords) => records.append(record, clientRecords),
    }),
    transport,
  );
  return records;
}
