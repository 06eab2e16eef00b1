// The predicted trajectory beside the measured one. The ideal run is the round walk itself over
// the plan's ideal twin (src/engine/ideal-plan.ts), so with nothing injected the trajectory the
// theory predicts and the run's measured f - f* are the same arithmetic: asked to agree to 1e-9
// relative at every round, on every bundled least-squares scenario and for every method, they
// agree exactly. With compression injected the two part, and the gap is the compression's cost.
// Independent of the walk, the trajectory of gradient descent on least squares is checked
// against the iteration x_{k+1} = x_k - eta (A^T A x_k - A^T b) / n written out with ml-matrix
// (the reference library for linear algebra).

import { Matrix } from 'ml-matrix';
import { describe, expect, it } from 'vitest';
import { bundledLeastSquaresScenarios } from '../support/bundled-scenarios.js';
import { loadScenarioFile, scenarioFromText } from '../../src/scenario/load-scenario.js';
import { runInProcess, planFor } from '../../src/engine/in-process-engine.js';
import { PredictedTrajectory } from '../../src/engine/predicted-trajectory.js';
import {
  TRAJECTORY_STATE_ENTRIES_MAX,
  trajectoryBlocker,
} from '../../src/engine/trajectory-blocker.js';
import { roundMapStateEntries } from '../../src/engine/method-state-size.js';
import type { RoundRecord } from '../../src/engine/round-record.js';
import { buildProblemInstance } from '../../src/data/problem-instance.js';
import type { LeastSquaresObjective } from '../../src/problem/least-squares.js';

const METHODS = ['gd', 'fedavg', 'fedprox', 'fednova', 'scaffold', 'fedlin', 'fedsplit'] as const;
const ROUNDS = 25;
/** the bound for a run with nothing injected */
const RELATIVE_AGREEMENT = 1e-9;

function recordsOf(path: string, tweaks: string[]): RoundRecord[] {
  const scenario = loadScenarioFile(path, [`run.rounds:${ROUNDS}`, 'run.target:0', ...tweaks]);
  const records: RoundRecord[] = [];
  runInProcess(scenario, { onRound: (record) => records.push(record) });
  return records;
}

const leastSquaresScenarios = bundledLeastSquaresScenarios();

describe('the predicted trajectory with nothing injected', () => {
  it('covers every bundled least-squares scenario', () => {
    expect(leastSquaresScenarios.length).toBeGreaterThanOrEqual(5);
  });

  for (const path of leastSquaresScenarios) {
    it(`${path}: equals the measured f - f* at every round, for every method`, () => {
      for (const method of METHODS) {
        // Nothing injected: dense f64 messages both ways (a sweep's top-k with fraction 1 is the
        // identity, but say so explicitly).
        const records = recordsOf(path, [
          `method.name:${method}`,
          'compression.uplink.default:{kind: none}',
          'compression.downlink.default:{kind: none}',
        ]);
        expect(records.length, method).toBe(ROUNDS + 1);
        for (const r of records) {
          expect(r.predictedSuboptimality, `${method} round ${r.round}`).not.toBeNull();
          const measured = r.suboptimality!;
          const gap = Math.abs(r.predictedSuboptimality! - measured);
          expect(gap, `${method} round ${r.round}`).toBeLessThanOrEqual(
            RELATIVE_AGREEMENT * measured,
          );
        }
      }
    }, 120_000);
  }
});

describe('the predicted trajectory with something injected', () => {
  it('exists beyond quadratics: a logistic run with nothing injected is its own ideal run', () => {
    const logistic = recordsOf('scenarios/quickstart.yaml', ['problem.kind:logistic']);
    for (const r of logistic)
      expect(
        Math.abs(r.predictedSuboptimality! - r.suboptimality!),
        `round ${r.round}`,
      ).toBeLessThanOrEqual(RELATIVE_AGREEMENT * r.suboptimality!);
  });

  it('parts from the measured one under top-k compression, and is absent where every round is random', () => {
    const compressed = recordsOf('scenarios/quickstart.yaml', [
      'compression.uplink.default:{kind: top-k, fraction: 0.2, errorFeedback: true}',
    ]);
    const last = compressed.at(-1)!;
    expect(last.predictedSuboptimality).not.toBeNull();
    // Top-k of 20% of the entries slows the run down: the measured curve lies above the ideal
    // one, far beyond rounding.
    expect(last.suboptimality!).toBeGreaterThan(1.05 * last.predictedSuboptimality!);
    const minibatch = recordsOf('scenarios/quickstart.yaml', ['method.gradient:{minibatch: 10}']);
    expect(minibatch.every((r) => r.predictedSuboptimality === null)).toBe(true);
  });
});

describe('PredictedTrajectory', () => {
  it('follows gradient descent on least squares as ml-matrix iterates it, in any order asked', () => {
    const text = [
      'name: gd-reference',
      'seed: 7',
      'problem: {kind: least-squares, regularization: 0}',
      'data: {source: synthetic, features: 5, samplesPerClient: 30}',
      'clients: {count: 3}',
      'method: {name: gd, stepSize: 0.05, stepPolicy: fixed}',
      'run: {rounds: 10}',
    ].join('\n');
    const scenario = scenarioFromText(text, 'gd-reference.yaml');
    const { plan, theory } = planFor(scenario);
    const trajectory = new PredictedTrajectory(
      plan,
      theory.instance.objectives,
      theory.instance.global,
      theory.optimum,
    );
    // f = sum_i p_i f_i with f_i = ||A_i x - b_i||^2 / (2 n_i) (no ridge here): its gradient is
    // sum_i p_i A_i^T (A_i x - b_i) / n_i, stacked here as one weighted normal-equation system.
    const instance = buildProblemInstance(scenario);
    const d = instance.dim;
    let hessian = Matrix.zeros(d, d);
    let linear = Matrix.zeros(d, 1);
    instance.objectives.forEach((objective, i) => {
      const { shard } = objective as LeastSquaresObjective;
      const n = shard.sampleCount;
      const a = new Matrix(n, d);
      for (let r = 0; r < n; r++)
        for (let c = 0; c < d; c++) a.set(r, c, shard.features[r * d + c]);
      const b = Matrix.columnVector(Array.from(shard.targets));
      const w = instance.weights[i] / n;
      hessian = hessian.add(a.transpose().mmul(a).mul(w));
      linear = linear.add(a.transpose().mmul(b).mul(w));
    });
    const eta = 0.05;
    let x = Matrix.zeros(d, 1);
    const expected: number[] = [];
    for (let k = 0; k <= 10; k++) {
      const model = Float64Array.from(x.to1DArray());
      expected.push(theory.instance.global.loss(model) - theory.optimum.loss);
      x = x.sub(hessian.mmul(x).sub(linear).mul(eta));
    }
    const asked = [0, 3, 4, 10, 2, 7];
    for (const k of asked)
      expect(Math.abs(trajectory.at(k)! / expected[k] - 1), `round ${k}`).toBeLessThan(1e-10);
  });

  it('is not walked past the state limit, and says why', () => {
    // FedAvg on 2,000 clients at d = 300: the method's state is past 2^20 entries.
    const scenario = loadScenarioFile('scenarios/quickstart.yaml', [
      'method.name:fedavg',
      'clients.count:2000',
      'data.features:300',
    ]);
    const entries = roundMapStateEntries(scenario, 300);
    expect(entries).toBeGreaterThan(TRAJECTORY_STATE_ENTRIES_MAX);
    expect(trajectoryBlocker(scenario, 300)).toBe(
      `the method's state has ${entries} entries (fedavg, 2000 clients, dimension 300), above the limit of ${TRAJECTORY_STATE_ENTRIES_MAX} for walking the ideal run beside it`,
    );
    expect(trajectoryBlocker(loadScenarioFile('scenarios/quickstart.yaml'), 20)).toBeNull();
  });
});
