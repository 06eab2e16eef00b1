import { Matrix } from 'ml-matrix';
import { describe, expect, it } from 'vitest';
import { fedavg } from '../../src/algorithm/fedavg.js';
import { fedprox } from '../../src/algorithm/fedprox.js';
import { fromColumn, standardProblem, toColumn } from './fixtures/least-squares-problem.js';
import {
  bitwiseEqual,
  distance,
  modelOf,
  norm,
  runRound,
  startRun,
} from './fixtures/round-loop.js';

describe('fedprox', () => {
  const problem = standardProblem();
  const m = problem.objectives.length;
  const eta = 1 / problem.smoothness;
  const taus = [1, 5, 12, 20];

  it('with mu_prox = 0 equals FedAvg bit for bit (Li et al., MLSys 2020: FedAvg is the case mu = 0)', () => {
    const a = startRun(fedprox, problem, { proxCoefficient: 0 });
    const b = startRun(fedavg, problem);
    const plan = { localSteps: taus, stepSizes: taus.map((t) => eta / t) };
    for (let r = 0; r < 20; r++) {
      runRound(a, plan);
      runRound(b, plan);
      expect(bitwiseEqual(modelOf(a), modelOf(b))).toBe(true);
    }
  });

  it('takes gradient steps on f_i(y) + (mu/2)||y - x||^2 (Li et al., MLSys 2020, the proximal local objective)', () => {
    // Reference with ml-matrix: y <- y - eta (H_i y - h_i + mu (y - x)), three steps.
    const mu = 0.5;
    const steps = 3;
    const x0 = Float64Array.from({ length: problem.dim }, (_, j) => 0.2 * j - 0.4);
    const run = startRun(fedprox, problem, { proxCoefficient: mu }, x0);
    runRound(run, { localSteps: Array(m).fill(steps), stepSizes: Array(m).fill(eta) });
    const x = toColumn(x0);
    const expected = Float64Array.from(x0);
    for (let i = 0; i < m; i++) {
      const h = problem.objectives[i].hessian();
      const linear = problem.objectives[i].linearTerm();
      let y = x.clone();
      for (let k = 0; k < steps; k++) {
        // ml-matrix instance arithmetic works in place, hence the static Matrix.sub for y - x.
        const direction = h.mmul(y).sub(linear).add(Matrix.sub(y, x).mul(mu));
        y = Matrix.sub(y, direction.mul(eta));
      }
      const yi = fromColumn(y);
      for (let j = 0; j < expected.length; j++) expected[j] += problem.weights[i] * (yi[j] - x0[j]);
    }
    // 1e-12 relative: rounding only (common practice).
    expect(distance(modelOf(run), expected)).toBeLessThanOrEqual(1e-12 * norm(expected));
  });
});
