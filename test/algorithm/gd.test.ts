import { describe, expect, it } from 'vitest';
import { fedavg } from '../../src/algorithm/fedavg.js';
import { gd } from '../../src/algorithm/gd.js';
import { standardProblem } from './fixtures/least-squares-problem.js';
import { bitwiseEqual, modelOf, runRound, startRun, suboptimality } from './fixtures/round-loop.js';

describe('gd', () => {
  const problem = standardProblem();
  const eta = 1 / problem.smoothness;
  const m = problem.objectives.length;

  it('equals FedAvg with tau = 1 bit for bit (DESIGN.md, Methods: gd is fedavg with tau = 1)', () => {
    const a = startRun(gd, problem);
    const b = startRun(fedavg, problem);
    const plan = { localSteps: Array(m).fill(1), stepSizes: Array(m).fill(eta) };
    for (let r = 0; r < 25; r++) {
      runRound(a, plan);
      runRound(b, plan);
      expect(bitwiseEqual(modelOf(a), modelOf(b))).toBe(true);
    }
  });

  it('takes one step a round whatever local step count the budget carries', () => {
    const a = startRun(gd, problem);
    const b = startRun(fedavg, problem);
    for (let r = 0; r < 5; r++) {
      runRound(a, { localSteps: [3, 7, 11, 20], stepSizes: Array(m).fill(eta) });
      runRound(b, { localSteps: Array(m).fill(1), stepSizes: Array(m).fill(eta) });
    }
    expect(bitwiseEqual(modelOf(a), modelOf(b))).toBe(true);
  });

  it('contracts f - f* by at least (1 - mu/L) a round with eta = 1/L', () => {
    // Gradient descent with step 1/L on an L-smooth f satisfying the PL inequality with mu
    // (implied by mu-strong convexity): f(x+) - f* <= (1 - mu/L)(f(x) - f*) (Karimi, Nutini and
    // Schmidt, ECML PKDD 2016, Theorem 1). L and mu are the extreme eigenvalues of the Hessian
    // of f from ml-matrix. The slack 1e-14 covers rounding in f (common practice).
    const run = startRun(gd, problem);
    const plan = { localSteps: Array(m).fill(1), stepSizes: Array(m).fill(eta) };
    const rate = 1 - problem.strongConvexity / problem.smoothness;
    let gap = suboptimality(run);
    for (let r = 0; r < 30; r++) {
      runRound(run, plan);
      const next = suboptimality(run);
      expect(next).toBeLessThanOrEqual(rate * gap + 1e-14);
      gap = next;
    }
  });
});
