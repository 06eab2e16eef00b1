import { Matrix, solve } from 'ml-matrix';
import { describe, expect, it } from 'vitest';
import { fedavg } from '../../src/algorithm/fedavg.js';
import { scaffold } from '../../src/algorithm/scaffold.js';
import { Rng } from '../../src/base/rng.js';
import { affineFixedPoint, FIXED_POINT_DIMENSION_MAX } from '../../src/theory/fixed-point.js';
import { TheoryError } from '../../src/theory/theory-error.js';
import { fromColumn, standardProblem } from '../algorithm/fixtures/least-squares-problem.js';
import { clientMinimizer, localStepMap } from '../algorithm/fixtures/quadratic-reference.js';
import {
  matrixMap,
  modelRoundMap,
  randomArray,
  randomMatrix,
  scaffoldStateMap,
} from './fixtures/affine-maps.js';
import { codeOf } from '../support/error-code.js';

const theoryErrorCode = (action: () => unknown): string => codeOf(action, TheoryError);

const distance = (a: ArrayLike<number>, b: ArrayLike<number>) =>
  Math.hypot(...Array.from(a, (value, j) => value - b[j]));
const norm = (a: ArrayLike<number>) => Math.hypot(...Array.from(a));

describe('affineFixedPoint', () => {
  it('solves (I - A) s = b as ml-matrix solve does, for contracting and expanding A alike', () => {
    const rng = Rng.fromSeed(42);
    // Spectral radius about 0.5 and about 3: a fixed point exists in both cases; only in the
    // first does iterating the map reach it.
    for (const scale of [0.5, 3]) {
      const n = 12;
      const a = randomMatrix(rng, n, scale);
      const b = randomArray(rng, n, 4);
      const map = matrixMap(a, b);
      let applications = 0;
      const result = affineFixedPoint((state) => {
        applications++;
        return map(state);
      }, n);
      const expected = solve(Matrix.eye(n).sub(a), Matrix.columnVector(b)).getColumn(0);
      // Both are backward-stable solves of the same 12 x 12 system (common practice: 1e-12).
      expect(distance(result.state, expected)).toBeLessThan(1e-12 * norm(expected));
      // The certificate is computed with one more application of T, at rounding level of ||b||.
      expect(result.residualNorm).toBeLessThan(1e-13 * norm(b));
      expect(result.mapApplications).toBe(applications);
      expect(applications).toBeGreaterThanOrEqual(1 + n);
    }
  });

  it("finds FedAvg's limit from its round map (closed form of Pathak and Wainwright, NeurIPS 2020, via ml-matrix)", () => {
    const problem = standardProblem();
    const m = problem.objectives.length;
    const eta = 1 / problem.smoothness;
    const taus = [1, 5, 12, 20];
    const map = modelRoundMap(fedavg, problem, { localSteps: taus, stepSizes: Array(m).fill(eta) });
    // x_fa = (sum p_i M_i)^{-1} sum p_i M_i x_i*, M_i = I - (I - eta H_i)^tau_i, written with the
    // method tests' ml-matrix references (repeated mmul and an LU solve).
    let lhs = Matrix.zeros(problem.dim, problem.dim);
    let rhs = Matrix.zeros(problem.dim, 1);
    for (let i = 0; i < m; i++) {
      const weighted = localStepMap(problem.objectives[i], taus[i], eta).mul(problem.weights[i]);
      lhs = lhs.add(weighted);
      rhs = rhs.add(weighted.mmul(clientMinimizer(problem.objectives[i])));
    }
    const expected = fromColumn(solve(lhs, rhs));
    const result = affineFixedPoint(map, problem.dim);
    // 1e-12 relative: rounding of dozens of local steps in 6 dimensions (common practice).
    expect(distance(result.state, expected)).toBeLessThan(1e-12 * norm(expected));
  });

  it('returns the limit from the start when the round conserves a quantity (M has the eigenvalue 1)', () => {
    // s -> ((s_0 + s_1) / 2) (1, 1) conserves the mean: every (a, a) is a fixed point, and from
    // (1, 3) one round reaches (2, 2).
    const averaging = (s: Float64Array) =>
      Float64Array.of(0.5 * (s[0] + s[1]), 0.5 * (s[0] + s[1]));
    const limit = affineFixedPoint(averaging, 2, { base: Float64Array.of(1, 3) }).state;
    // A few ulps of 2 (rounding of the products).
    expect(distance(limit, [2, 2])).toBeLessThan(8 * Number.EPSILON);
  });

  it('keeps a constant leaf of the state (a stored initial model) and solves the rest', () => {
    const problem = standardProblem();
    const m = problem.objectives.length;
    const d = problem.dim;
    const eta = 1 / problem.smoothness;
    const taus = [1, 5, 12, 20];
    const model = modelRoundMap(fedavg, problem, {
      localSteps: taus,
      stepSizes: Array(m).fill(eta),
    });
    // State [x, x_0]: the round moves x and carries x_0 along unchanged.
    const withLeaf = (s: Float64Array) => {
      const out = new Float64Array(2 * d);
      out.set(model(s.subarray(0, d)), 0);
      out.set(s.subarray(d), d);
      return out;
    };
    const base = Float64Array.from({ length: 2 * d }, (_, j) => (j < d ? 0 : 0.1 * j));
    const limit = affineFixedPoint(withLeaf, 2 * d, { base });
    const alone = affineFixedPoint(model, d);
    expect(distance(limit.state.subarray(0, d), alone.state)).toBeLessThan(
      1e-12 * norm(alone.state),
    );
    expect(Array.from(limit.state.subarray(d))).toEqual(Array.from(base.subarray(d)));
  });

  it('reports E_SINGULAR when the state drifts along a conserved direction (no fixed point)', () => {
    // s -> (s_0 + 1, s_1 / 2): the first coordinate grows by 1 every round.
    const drifting = (s: Float64Array) => Float64Array.of(s[0] + 1, 0.5 * s[1]);
    expect(theoryErrorCode(() => affineFixedPoint(drifting, 2))).toBe('E_THEORY_SINGULAR');
  });

  it("finds SCAFFOLD's limit on its whole flattened state: x* (Karimireddy et al., ICML 2020), conserved part kept", () => {
    const problem = standardProblem();
    const m = problem.objectives.length;
    const d = problem.dim;
    const plan = { localSteps: [2, 3, 4, 5], stepSizes: Array(m).fill(1 / problem.smoothness) };
    const map = scaffoldStateMap(scaffold, problem, plan);
    // From zero controls, c = sum_i p_i c_i holds throughout; the limit is x* (the fixed point of
    // the corrected method), the x* from the normal equations solved by ml-matrix.
    const fromZero = affineFixedPoint(map, (m + 2) * d);
    expect(distance(fromZero.state.subarray(0, d), problem.xStar)).toBeLessThan(
      1e-10 * norm(problem.xStar),
    );
    const control = fromZero.state.subarray(d, 2 * d);
    const weightedControls = new Float64Array(d);
    problem.weights.forEach((p, i) => {
      for (let j = 0; j < d; j++) weightedControls[j] += p * fromZero.state[(2 + i) * d + j];
    });
    expect(distance(control, weightedControls)).toBeLessThan(1e-12 * (1 + norm(control)));

    // From a start that breaks that identity, the limit is the one the rounds themselves reach
    // (300 rounds contract the error by rho^300 < 1e-30 here; see the predict-rate tests).
    const rng = Rng.fromSeed(43);
    const start = Float64Array.from({ length: (m + 2) * d }, () => rng.normal());
    let iterate: Float64Array = Float64Array.from(start);
    for (let round = 0; round < 300; round++) iterate = map(iterate);
    const fromStart = affineFixedPoint(map, (m + 2) * d, { base: start });
    expect(distance(fromStart.state, iterate)).toBeLessThan(1e-10 * norm(iterate));
  });

  it('refuses dimensions beyond its limit before applying the map, and bad options', () => {
    let applications = 0;
    const map = (s: Float64Array) => {
      applications++;
      return s;
    };
    expect(theoryErrorCode(() => affineFixedPoint(map, FIXED_POINT_DIMENSION_MAX + 1))).toBe(
      'E_THEORY_SIZE_LIMIT',
    );
    expect(applications).toBe(0);
    expect(theoryErrorCode(() => affineFixedPoint(map, 3, { base: new Float64Array(2) }))).toBe(
      'E_THEORY_DIMENSION',
    );
    expect(theoryErrorCode(() => affineFixedPoint(map, 3, { refinementsMax: -1 }))).toBe(
      'E_THEORY_ARGUMENT',
    );
    // A GMRES budget too small for the system: the residual cannot reach rounding level.
    const rng = Rng.fromSeed(44);
    expect(
      theoryErrorCode(() =>
        affineFixedPoint(matrixMap(randomMatrix(rng, 20, 0.9), randomArray(rng, 20)), 20, {
          iterationsMax: 2,
          refinementsMax: 0,
        }),
      ),
    ).toBe('E_THEORY_NOT_CONVERGED');
  });
});
