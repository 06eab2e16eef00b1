// The coordinator's oracle thread (server/oracle-pool.ts, oracle-task.ts), through a real piscina
// pool: given the plan once and the coordinator's shards moved to it, it evaluates every model
// with the very bits the in-process engine gets from its own instance (evaluateModel over the
// global objective, PredictedTrajectory in order), whether the trajectory was walked ahead
// between tasks or not, and for rounds asked out of order.

import { afterAll, describe, expect, it } from 'vitest';
import { loadScenarioFile } from '../../src/scenario/load-scenario.js';
import { planFor } from '../../src/engine/in-process-engine.js';
import { evaluateModel } from '../../src/engine/evaluate.js';
import { PredictedTrajectory } from '../../src/engine/predicted-trajectory.js';
import { OraclePool } from '../../server/oracle-pool.js';

const TEST_SECONDS_MAX = 60;

describe('oracle thread', () => {
  const scenario = loadScenarioFile('scenarios/quickstart.yaml', [
    'problem.kind:logistic',
    'data.samplesPerClient:200',
    'run.rounds:8',
  ]);
  const { plan, theory } = planFor(scenario);
  const pool = new OraclePool(plan, theory);
  afterAll(() => pool.close());
  const { x, loss } = theory.optimum;
  const inOrder = new PredictedTrajectory(
    plan,
    theory.instance.objectives,
    theory.instance.global,
    theory.optimum,
  );
  const predicted = Array.from({ length: 9 }, (_, r) => inOrder.at(r));
  /** A model per round: x* moved off by a vector that shrinks with the round. */
  const modelAt = (round: number) => x.map((v, i) => v + ((i % 3) - 1) / (round + 1));

  it(
    'evaluates each round with the in-process bits, in order and out of order',
    async () => {
      for (const round of [0, 1, 2, 3, 6, 4, 8]) {
        const model = modelAt(round);
        const got = await pool.evaluate(model, round);
        const expected = evaluateModel(theory.instance.global, x, loss, model);
        expect(Object.is(got.suboptimality, expected.suboptimality), `round ${round}`).toBe(true);
        expect(Object.is(got.distance, expected.distance), `round ${round}`).toBe(true);
        expect(Object.is(got.predictedSuboptimality, predicted[round]), `round ${round}`).toBe(
          true,
        );
        // Time for the thread to walk ahead before the next task, as between real rounds.
        await new Promise((resolve) => setTimeout(resolve, 20));
      }
      expect(predicted.every((v) => v !== null && Number.isFinite(v))).toBe(true);
    },
    TEST_SECONDS_MAX * 1000,
  );
});
