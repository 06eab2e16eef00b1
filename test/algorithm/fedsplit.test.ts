import { Matrix, solve } from 'ml-matrix';
import { describe, expect, it } from 'vitest';
import { fedsplit } from '../../src/algorithm/fedsplit.js';
import { fromColumn, standardProblem, toColumn } from './fixtures/least-squares-problem.js';
import {
  distance,
  modelOf,
  norm,
  runRound,
  runRounds,
  startRun,
  suboptimality,
} from './fixtures/round-loop.js';

describe('fedsplit', () => {
  const problem = standardProblem();
  const m = problem.objectives.length;
  // s = 1/sqrt(L mu), the step size of Pathak and Wainwright's (NeurIPS 2020) linear-rate result
  // for L-smooth, mu-strongly convex f_i (value recalled from memory); L and mu of f from ml-matrix.
  const s = 1 / Math.sqrt(problem.smoothness * problem.strongConvexity);
  const x0 = Float64Array.from({ length: problem.dim }, (_, j) => 0.4 - 0.15 * j);
  const planOf = (tau: number, participants?: number[]) => ({
    localSteps: Array(m).fill(tau),
    stepSizes: Array(m).fill(s),
    participants,
  });

  it('reaches f - f* <= 1e-10 when each prox is solved to gradient norm 1e-12 (Pathak and Wainwright, NeurIPS 2020, Theorem 1)', () => {
    // Theorem 1: with exact proxes FedSplit converges linearly to x*. Inner steps solve each prox
    // to ||grad h|| <= 1e-12 within a cap of 500 steps (the inner problem's condition number is
    // about sqrt(L/mu) here, so the cap is never reached).
    const run = startRun(fedsplit, problem, { stepSize: s, proxTolerance: 1e-12 }, x0);
    runRounds(run, planOf(500), 60);
    expect(suboptimality(run)).toBeLessThanOrEqual(1e-10);
    for (const client of run.clients) expect(client.innerStepsTaken).toBeLessThan(500);
  });

  it('takes the prox step and the centering step of Algorithm 1 (Pathak and Wainwright, NeurIPS 2020)', () => {
    // One round from z_i = x = x0: u_i = prox_{s f_i}(2x - z_i) = (H_i + I/s)^{-1} (h_i + (2x - z_i)/s)
    // by ml-matrix, z_i+ = z_i + 2 (u_i - x), and x+ = sum p_i z_i+.
    const run = startRun(fedsplit, problem, { stepSize: s, proxTolerance: 1e-13 }, x0);
    runRound(run, planOf(1000));
    const x = toColumn(x0);
    const expected = new Float64Array(problem.dim);
    for (let i = 0; i < m; i++) {
      const f = problem.objectives[i];
      const centre = Matrix.sub(x.clone().mul(2), x);
      const u = fromColumn(
        solve(
          f.hessian().add(Matrix.eye(problem.dim).mul(1 / s)),
          f.linearTerm().add(centre.mul(1 / s)),
        ),
      );
      const z = Float64Array.from(x0, (xj, j) => xj + 2 * (u[j] - xj));
      // 1e-11: the inner solve stops at gradient norm 1e-13; its error is at most that over the
      // prox objective's strong convexity (>= 1/s), doubled by the centering step.
      expect(distance(run.clients[i].z, z)).toBeLessThanOrEqual(1e-11);
      for (let j = 0; j < expected.length; j++) expected[j] += problem.weights[i] * z[j];
    }
    expect(distance(modelOf(run), expected)).toBeLessThanOrEqual(1e-11);
  });

  it('stops the inner steps at the tolerance, and takes all tau_i steps when the tolerance is 0', () => {
    const early = startRun(fedsplit, problem, { stepSize: s, proxTolerance: 1e-6 }, x0);
    runRound(early, planOf(400));
    for (const client of early.clients) {
      expect(client.innerStepsTaken).toBeGreaterThan(0);
      expect(client.innerStepsTaken).toBeLessThan(400);
    }
    const full = startRun(fedsplit, problem, { stepSize: s, proxTolerance: 0 }, x0);
    runRound(full, planOf(7));
    for (const client of full.clients) expect(client.innerStepsTaken).toBe(7);
  });

  it('keeps x = sum_i p_i z_i over all clients through partial rounds, clients joining late included', () => {
    // Clients that have not yet taken part hold z_i = x0 (Algorithm 1's initialization).
    const run = startRun(fedsplit, problem, { stepSize: s, proxTolerance: 0 }, x0);
    for (const participants of [[0, 1], [1, 2], [0, 3], [2], [0, 1, 2, 3]]) {
      runRound(run, planOf(5, participants));
      const weighted = new Float64Array(problem.dim);
      for (let i = 0; i < m; i++) {
        const z = run.clients[i].started ? run.clients[i].z : x0;
        for (let j = 0; j < weighted.length; j++) weighted[j] += problem.weights[i] * z[j];
      }
      // 1e-12 relative: rounding only (common practice).
      expect(distance(modelOf(run), weighted)).toBeLessThanOrEqual(1e-12 * norm(weighted));
    }
  });
});
