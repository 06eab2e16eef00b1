import { describe, expect, it } from 'vitest';
import { fedavg } from '../../src/algorithm/fedavg.js';
import { fedlin } from '../../src/algorithm/fedlin.js';
import type { Upload } from '../../src/algorithm/method.js';
import { fromColumn, standardProblem, toColumn } from './fixtures/least-squares-problem.js';
import {
  budgetOf,
  distance,
  modelOf,
  norm,
  runRound,
  runRounds,
  startRun,
  suboptimality,
} from './fixtures/round-loop.js';

describe('fedlin', () => {
  const problem = standardProblem();
  const m = problem.objectives.length;
  const eta = 1 / problem.smoothness;
  /** the paper's step policy: eta_i = eta / tau_i */
  const inverseSteps = (taus: number[]) => ({
    localSteps: taus,
    stepSizes: taus.map((t) => eta / t),
  });

  it('keeps x* fixed: one round from x* moves x by at most 1e-12, tau_i from 1 to 50 (FedLin, NeurIPS 2021)', () => {
    // At x*, g = sum p_i grad f_i(x*) = 0 and the corrected local direction vanishes at y = x*,
    // so x* is a fixed point whatever tau_i (FedLin, NeurIPS 2021). 1e-12 bounds the
    // rounding of x* itself (from ml-matrix) carried through 50 steps (common practice).
    for (const plan of [
      inverseSteps([1, 17, 33, 50]),
      { localSteps: [50, 1, 25, 8], stepSizes: Array(m).fill(eta) },
    ]) {
      const run = startRun(fedlin, problem, {}, problem.xStar);
      runRound(run, plan);
      expect(distance(modelOf(run), problem.xStar)).toBeLessThanOrEqual(1e-12);
    }
  });

  it('converges to x* (f - f* <= 1e-12) with tau_i from 1 to 20 where FedAvg stalls', () => {
    // FedLin converges linearly to x* under heterogeneity with eta_i = eta/tau_i for smooth,
    // strongly convex f_i (FedLin, NeurIPS 2021); FedAvg with the same budgets has a fixed point away from x*
    // (Pathak and Wainwright, NeurIPS 2020). 1e-12 and 1e-6: see fedavg.test.ts.
    const plan = inverseSteps([1, 5, 12, 20]);
    const run = startRun(fedlin, problem);
    runRounds(run, plan, 120);
    expect(suboptimality(run)).toBeLessThanOrEqual(1e-12);
    const baseline = startRun(fedavg, problem);
    runRounds(baseline, plan, 120);
    expect(suboptimality(baseline)).toBeGreaterThan(1e-6);
  });

  it("forms g from the participants' full gradients at x and steps with grad f_i(y) - grad f_i(x) + g", () => {
    // Reference with ml-matrix, grad f_i(y) = H_i y - h_i: g = sum p~_i (H_i x - h_i) over a 2-of-4
    // round, then y <- y - eta_i (H_i (y - x) + g).
    const x0 = Float64Array.from({ length: problem.dim }, (_, j) => 0.25 * j - 0.5);
    const plan = inverseSteps([3, 6, 2, 9]);
    const participants = [1, 2];
    const run = startRun(fedlin, problem, {}, x0);
    runRound(run, { ...plan, participants });

    const share = problem.weights[1] + problem.weights[2];
    const x = toColumn(x0);
    let g = toColumn(new Float64Array(problem.dim));
    for (const i of participants) {
      const f = problem.objectives[i];
      g = g.add(
        f
          .hessian()
          .mmul(x)
          .sub(f.linearTerm())
          .mul(problem.weights[i] / share),
      );
    }
    // 1e-12 relative: rounding only (common practice).
    expect(distance(run.server.gradient, fromColumn(g))).toBeLessThanOrEqual(
      1e-12 * norm(fromColumn(g)),
    );

    const expected = Float64Array.from(x0);
    for (const i of participants) {
      const h = problem.objectives[i].hessian();
      let y = x.clone();
      for (let k = 0; k < plan.localSteps[i]; k++) {
        const direction = h.mmul(y.clone().sub(x)).add(g);
        y = y.sub(direction.mul(plan.stepSizes[i]));
      }
      const yi = fromColumn(y);
      for (let j = 0; j < expected.length; j++)
        expected[j] += (problem.weights[i] / share) * (yi[j] - x0[j]);
    }
    expect(distance(modelOf(run), expected)).toBeLessThanOrEqual(1e-12 * norm(expected));
  });

  it("refuses the local exchange without this round's gradient exchange", () => {
    const run = startRun(fedlin, problem);
    const plan = inverseSteps([2, 2, 2, 2]);
    const gradientDown = fedlin.broadcast(run.server, 'gradient');
    const localDown = fedlin.broadcast(run.server, 'local');
    expect(() =>
      fedlin.work(run.clients[0], problem.objectives[0], localDown, budgetOf(plan, 0), 'local'),
    ).toThrow(expect.objectContaining({ code: 'E_METHOD_SEQUENCE' }));
    const up = fedlin.work(
      run.clients[0],
      problem.objectives[0],
      gradientDown,
      budgetOf(plan, 0),
      'gradient',
    );
    const uploads: Upload[] = [
      { clientId: 0, weight: problem.weights[0], localSteps: 0, stepSize: eta, fields: up },
    ];
    fedlin.aggregate(run.server, uploads, 'gradient');
    const down = fedlin.broadcast(run.server, 'local');
    fedlin.work(run.clients[0], problem.objectives[0], down, budgetOf(plan, 0), 'local');
    expect(() =>
      fedlin.work(run.clients[0], problem.objectives[0], down, budgetOf(plan, 0), 'local'),
    ).toThrow(expect.objectContaining({ code: 'E_METHOD_SEQUENCE' }));
  });
});
