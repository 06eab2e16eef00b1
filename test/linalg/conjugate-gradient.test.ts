import { CholeskyDecomposition, Matrix } from 'ml-matrix';
import { describe, expect, it } from 'vitest';
import { Rng } from '../../src/base/rng.js';
import { conjugateGradient } from '../../src/linalg/conjugate-gradient.js';
import { largestEigenvalue, type SymmetricOperator } from '../../src/linalg/spectrum.js';
import { errorCode, relativeError, symmetricExtremes } from '../problem/fixtures.js';

function operatorOf(m: Matrix): SymmetricOperator {
  const n = m.rows;
  const a = Float64Array.from(m.to1DArray());
  return (v, out) => {
    for (let i = 0; i < n; i++) {
      let sum = 0;
      for (let j = 0; j < n; j++) sum += a[i * n + j] * v[j];
      out[i] = sum;
    }
  };
}

/** B^T B / k + shift I for a random k x n B: symmetric positive definite when shift > 0. */
function randomDefinite(rng: Rng, n: number, k: number, shift: number): Matrix {
  const b = Matrix.from1DArray(
    k,
    n,
    Array.from({ length: k * n }, () => rng.normal()),
  );
  return b.transpose().mmul(b).div(k).add(Matrix.eye(n).mul(shift));
}

describe('conjugateGradient', () => {
  it('solves SPD systems as ml-matrix CholeskyDecomposition does, to 1e-10 relative', () => {
    const rng = Rng.fromSeed(11);
    for (const n of [5, 40, 120]) {
      const a = randomDefinite(rng, n, 2 * n, 0.1);
      const b = Float64Array.from({ length: n }, () => rng.normal());
      const reference = new CholeskyDecomposition(a).solve(Matrix.columnVector(Array.from(b)));
      const result = conjugateGradient(operatorOf(a), b, { relativeTolerance: 1e-13 });
      expect(result.converged).toBe(true);
      expect(result.nonPositiveCurvature).toBe(false);
      expect(relativeError(result.solution, reference.getColumn(0))).toBeLessThan(1e-10);
    }
  });

  it('ends within n products in exact arithmetic terms: a 3 x 3 system takes at most a few (Hestenes and Stiefel 1952)', () => {
    const a = new Matrix([
      [4, 1, 0],
      [1, 3, 1],
      [0, 1, 2],
    ]);
    const result = conjugateGradient(operatorOf(a), Float64Array.from([1, 2, 3]));
    expect(result.converged).toBe(true);
    expect(result.iterations).toBeLessThanOrEqual(4);
    const residual = a.mmul(Matrix.columnVector(Array.from(result.solution)));
    expect(relativeError(residual.getColumn(0), [1, 2, 3])).toBeLessThan(1e-12);
  });

  it('returns the minimum-norm solution of a singular consistent system (iterates stay in the range)', () => {
    // diag(2, 1, 0): b = (2, 1, 0) has solutions (1, 1, t); the minimum-norm one is t = 0.
    const a = new Matrix([
      [2, 0, 0],
      [0, 1, 0],
      [0, 0, 0],
    ]);
    const result = conjugateGradient(operatorOf(a), Float64Array.from([2, 1, 0]));
    expect(Array.from(result.solution)).toEqual([1, 1, 0]);
  });

  it('stops at a direction of negative curvature and says so', () => {
    const a = new Matrix([
      [-1, 0],
      [0, 2],
    ]);
    const result = conjugateGradient(operatorOf(a), Float64Array.from([1, 0]));
    expect(result.nonPositiveCurvature).toBe(true);
    expect(result.converged).toBe(false);
    expect(Array.from(result.solution)).toEqual([0, 0]);
  });

  it('refuses a tolerance that is not positive', () => {
    const a = Matrix.eye(2);
    expect(
      errorCode(() =>
        conjugateGradient(operatorOf(a), new Float64Array(2), { relativeTolerance: 0 }),
      ),
    ).toBe('E_LINALG_ARGUMENT');
  });
});

describe('largestEigenvalue', () => {
  it('matches ml-matrix EigenvalueDecomposition to 1e-12 relative on random SPD matrices', () => {
    const rng = Rng.fromSeed(12);
    for (const n of [6, 30, 80]) {
      const a = randomDefinite(rng, n, n + 3, 0.01);
      const { largest } = largestEigenvalue(operatorOf(a), n);
      const reference = symmetricExtremes(a).largest;
      expect(Math.abs(largest - reference) / reference).toBeLessThan(1e-12);
    }
  });
});
