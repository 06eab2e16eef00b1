import { Matrix, solve } from 'ml-matrix';
import { describe, expect, it } from 'vitest';
import { fedavg } from '../../src/algorithm/fedavg.js';
import type { Upload } from '../../src/algorithm/method.js';
import type { MinibatchSampler } from '../../src/problem/minibatch-sampler.js';
import { MethodError } from '../../src/algorithm/method-error.js';
import { fromColumn, standardProblem } from './fixtures/least-squares-problem.js';
import {
  clientMinimizer,
  localStepMap,
  referenceLocalDescent,
} from './fixtures/quadratic-reference.js';
import {
  bitwiseEqual,
  distance,
  modelOf,
  norm,
  runRound,
  runRounds,
  startRun,
  suboptimality,
} from './fixtures/round-loop.js';

// Agreement with an ml-matrix reference up to rounding: 1e-12 relative is far above the
// double-precision error of a few dozen steps in 6 dimensions and far below any algorithmic
// difference (common practice).
const REFERENCE_TOLERANCE = 1e-12;

describe('fedavg', () => {
  const problem = standardProblem();
  const m = problem.objectives.length;
  const eta = 1 / problem.smoothness;
  const x0 = Float64Array.from({ length: problem.dim }, (_, j) => 0.3 * (j - 2));

  it('moves x by eta_g sum p_i (y_i - x) with y_i from tau_i local gradient steps (McMahan et al., AISTATS 2017)', () => {
    const taus = [1, 4, 9, 16];
    const etaG = 0.7;
    const run = startRun(fedavg, problem, { serverStepSize: etaG }, x0);
    runRound(run, { localSteps: taus, stepSizes: Array(m).fill(eta) });
    const expected = Float64Array.from(x0);
    for (let i = 0; i < m; i++) {
      const y = referenceLocalDescent(problem.objectives[i], x0, taus[i], eta);
      for (let j = 0; j < expected.length; j++)
        expected[j] += etaG * problem.weights[i] * (y[j] - x0[j]);
    }
    expect(distance(modelOf(run), expected)).toBeLessThanOrEqual(
      REFERENCE_TOLERANCE * norm(expected),
    );
  });

  it('renormalizes the weights over the participants (a 2-of-4 round)', () => {
    const taus = [2, 3, 5, 8];
    const run = startRun(fedavg, problem, {}, x0);
    runRound(run, { localSteps: taus, stepSizes: Array(m).fill(eta), participants: [1, 3] });
    const share = problem.weights[1] + problem.weights[3];
    const expected = Float64Array.from(x0);
    for (const i of [1, 3]) {
      const y = referenceLocalDescent(problem.objectives[i], x0, taus[i], eta);
      for (let j = 0; j < expected.length; j++)
        expected[j] += (problem.weights[i] / share) * (y[j] - x0[j]);
    }
    expect(distance(modelOf(run), expected)).toBeLessThanOrEqual(
      REFERENCE_TOLERANCE * norm(expected),
    );
  });

  it('stalls at its closed-form fixed point, measurably away from x* (Pathak and Wainwright, NeurIPS 2020)', () => {
    // On quadratics, tau_i gradient steps give y_i - x = M_i (x_i* - x) with
    // M_i = I - (I - eta H_i)^tau_i, so FedAvg's fixed point solves sum p_i M_i (x_i* - x) = 0:
    //   x_fp = (sum p_i M_i)^{-1} sum p_i M_i x_i*,
    // which is x* only when tau_i = 1 or the client minimizers agree (the fixed-point analysis of
    // federated gradient methods in Pathak and Wainwright, NeurIPS 2020, for p-weighted clients).
    const taus = [1, 5, 12, 20];
    let lhs = Matrix.zeros(problem.dim, problem.dim);
    let rhs = Matrix.zeros(problem.dim, 1);
    for (let i = 0; i < m; i++) {
      const map = localStepMap(problem.objectives[i], taus[i], eta).mul(problem.weights[i]);
      lhs = lhs.add(map);
      rhs = rhs.add(map.mmul(clientMinimizer(problem.objectives[i])));
    }
    const fixedPoint = fromColumn(solve(lhs, rhs));

    const run = startRun(fedavg, problem);
    runRounds(run, { localSteps: taus, stepSizes: Array(m).fill(eta) }, 300);
    const x = modelOf(run);
    // 1e-9 absolute: the iteration converged to rounding level (common practice).
    expect(distance(x, fixedPoint)).toBeLessThanOrEqual(1e-9);
    // "Measurably away": six orders of magnitude above the 1e-12 that the corrected methods
    // (SCAFFOLD, FedLin, FedSplit tests) reach on this very problem.
    expect(suboptimality(run)).toBeGreaterThan(1e-6);
    expect(distance(fixedPoint, problem.xStar)).toBeGreaterThan(1e-3);
  });

  it('calls the sampler once per local step and uses minibatch gradients', () => {
    const objective = problem.objectives[2];
    let calls = 0;
    // Every sample in order: the test objective's full gradient is this very minibatch.
    const everySample = Uint32Array.from({ length: objective.sampleCount }, (_, s) => s);
    const sampler: MinibatchSampler = {
      next: () => {
        calls++;
        return everySample;
      },
    };
    const down = { model: x0 };
    const sampled = fedavg.work(
      fedavg.initClient(problem.dim, configOf(), 2),
      objective,
      down,
      { localSteps: 6, stepSize: eta, sampler },
      'local',
    );
    const full = fedavg.work(
      fedavg.initClient(problem.dim, configOf(), 2),
      objective,
      down,
      { localSteps: 6, stepSize: eta, sampler: null },
      'local',
    );
    expect(calls).toBe(6);
    expect(bitwiseEqual(sampled.delta, full.delta)).toBe(true);
  });

  it('leaves x unchanged without uploads and rejects a non-finite upload before changing x', () => {
    const run = startRun(fedavg, problem, {}, x0);
    fedavg.aggregate(run.server, [], 'local');
    expect(bitwiseEqual(modelOf(run), x0)).toBe(true);

    const good = new Float64Array(problem.dim).fill(0.1);
    const bad = new Float64Array(problem.dim).fill(0.1);
    bad[3] = Number.NaN;
    const uploads: Upload[] = [
      { clientId: 0, weight: 0.5, localSteps: 1, stepSize: eta, fields: { delta: good } },
      { clientId: 2, weight: 0.5, localSteps: 1, stepSize: eta, fields: { delta: bad } },
    ];
    expect(() => fedavg.aggregate(run.server, uploads, 'local')).toThrow(
      expect.objectContaining({ code: 'E_METHOD_NOT_FINITE' }),
    );
    expect(bitwiseEqual(modelOf(run), x0)).toBe(true);
  });

  it('rejects an unknown exchange and a missing model field with stable codes', () => {
    const run = startRun(fedavg, problem);
    expect(() => fedavg.broadcast(run.server, 'gradient')).toThrow(MethodError);
    expect(() => fedavg.broadcast(run.server, 'gradient')).toThrow(
      expect.objectContaining({ code: 'E_METHOD_EXCHANGE' }),
    );
    const budget = { localSteps: 1, stepSize: eta, sampler: null };
    expect(() => fedavg.work(run.clients[0], problem.objectives[0], {}, budget, 'local')).toThrow(
      expect.objectContaining({ code: 'E_METHOD_MISSING_FIELD' }),
    );
  });

  function configOf() {
    return {
      clientCount: m,
      stepSize: eta,
      serverStepSize: 1,
      proxCoefficient: 0,
      proxTolerance: 0,
    };
  }
});
