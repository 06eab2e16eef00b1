import { Matrix, solve } from 'ml-matrix';
import { describe, expect, it } from 'vitest';
import { fedavg } from '../../src/algorithm/fedavg.js';
import { fednova } from '../../src/algorithm/fednova.js';
import { fromColumn, standardProblem } from './fixtures/least-squares-problem.js';
import {
  clientMinimizer,
  localStepMap,
  referenceLocalDescent,
} from './fixtures/quadratic-reference.js';
import { distance, modelOf, norm, runRound, runRounds, startRun } from './fixtures/round-loop.js';

describe('fednova', () => {
  const problem = standardProblem();
  const m = problem.objectives.length;
  const eta = 1 / problem.smoothness;
  const x0 = Float64Array.from({ length: problem.dim }, (_, j) => 0.5 - 0.1 * j);

  it('with equal tau_i and eta_g = 1 equals FedAvg (Wang et al., NeurIPS 2020: FedAvg is the case of equal steps)', () => {
    const a = startRun(fednova, problem, {}, x0);
    const b = startRun(fedavg, problem, {}, x0);
    const plan = { localSteps: Array(m).fill(8), stepSizes: Array(m).fill(eta) };
    for (let r = 0; r < 20; r++) {
      runRound(a, plan);
      runRound(b, plan);
      // Same update up to the order of rounding: FedNova divides by tau_i and multiplies by
      // tau_eff = tau (1e-13 relative, common practice).
      expect(distance(modelOf(a), modelOf(b))).toBeLessThanOrEqual(1e-13 * norm(modelOf(b)));
    }
  });

  it('applies x <- x - eta_g tau_eff sum p~_i (x - y_i)/tau_i over the participants (Wang et al., NeurIPS 2020)', () => {
    const taus = [2, 5, 9, 14];
    const participants = [0, 2, 3];
    const etaG = 0.8;
    const run = startRun(fednova, problem, { serverStepSize: etaG }, x0);
    runRound(run, { localSteps: taus, stepSizes: Array(m).fill(eta), participants });
    const share = participants.reduce((sum, i) => sum + problem.weights[i], 0);
    let effectiveSteps = 0;
    for (const i of participants) effectiveSteps += (problem.weights[i] / share) * taus[i];
    const expected = Float64Array.from(x0);
    for (const i of participants) {
      const y = referenceLocalDescent(problem.objectives[i], x0, taus[i], eta);
      const p = problem.weights[i] / share;
      for (let j = 0; j < expected.length; j++)
        expected[j] -= etaG * effectiveSteps * p * ((x0[j] - y[j]) / taus[i]);
    }
    // 1e-12 relative: rounding only (common practice).
    expect(distance(modelOf(run), expected)).toBeLessThanOrEqual(1e-12 * norm(expected));
  });

  it('converges on quadratics to the point where sum p_i d_i = 0', () => {
    // From the server rule, x is fixed when sum p_i d_i = 0 with d_i = (x - y_i)/tau_i =
    // M_i (x - x_i*)/tau_i, M_i = I - (I - eta H_i)^tau_i (tau_i gradient steps on a quadratic):
    //   x_nova = (sum p_i M_i/tau_i)^{-1} sum p_i M_i x_i*/tau_i.
    // Derived here from the update of Wang et al., NeurIPS 2020; the matrices come from ml-matrix.
    const taus = [1, 5, 12, 20];
    let lhs = Matrix.zeros(problem.dim, problem.dim);
    let rhs = Matrix.zeros(problem.dim, 1);
    for (let i = 0; i < m; i++) {
      const map = localStepMap(problem.objectives[i], taus[i], eta).mul(
        problem.weights[i] / taus[i],
      );
      lhs = lhs.add(map);
      rhs = rhs.add(map.mmul(clientMinimizer(problem.objectives[i])));
    }
    const run = startRun(fednova, problem);
    runRounds(run, { localSteps: taus, stepSizes: Array(m).fill(eta) }, 300);
    // 1e-9 absolute: converged to rounding level (common practice).
    expect(distance(modelOf(run), fromColumn(solve(lhs, rhs)))).toBeLessThanOrEqual(1e-9);
  });

  it('rejects an upload whose step count is not a positive integer', () => {
    const run = startRun(fednova, problem);
    const upload = {
      clientId: 0,
      weight: 1,
      localSteps: 0,
      stepSize: eta,
      fields: { delta: new Float64Array(problem.dim) },
    };
    expect(() => fednova.aggregate(run.server, [upload], 'local')).toThrow(
      expect.objectContaining({ code: 'E_METHOD_BUDGET' }),
    );
  });
});
