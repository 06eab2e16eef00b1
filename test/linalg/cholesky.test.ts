import { CholeskyDecomposition, Matrix, solve } from 'ml-matrix';
import { describe, expect, it } from 'vitest';
import { Rng } from '../../src/base/rng.js';
import { choleskyFactor, choleskySolve } from '../../src/linalg/cholesky.js';
import { errorCode, relativeError } from '../problem/fixtures.js';

/** B B^T / n + I for a random n x n B: symmetric positive definite by construction. */
function randomSpd(rng: Rng, n: number): Matrix {
  const b = Matrix.from1DArray(
    n,
    n,
    Array.from({ length: n * n }, () => rng.normal()),
  );
  return b.mmul(b.transpose()).div(n).add(Matrix.eye(n));
}

describe('choleskyFactor and choleskySolve', () => {
  it('give the factor of ml-matrix CholeskyDecomposition', () => {
    const n = 12;
    const a = randomSpd(Rng.fromSeed(1), n);
    const factor = choleskyFactor(Float64Array.from(a.to1DArray()), n);
    const reference = new CholeskyDecomposition(a).lowerTriangularMatrix.to1DArray();
    expect(relativeError(factor, reference)).toBeLessThan(1e-13);
  });

  it('solve A x = b as ml-matrix solve does, also in place', () => {
    const n = 20;
    const rng = Rng.fromSeed(2);
    const a = randomSpd(rng, n);
    const b = Float64Array.from({ length: n }, () => rng.normal());
    const factor = choleskyFactor(Float64Array.from(a.to1DArray()), n);
    const x = new Float64Array(n);
    choleskySolve(factor, n, b, x);
    const reference = solve(a, Matrix.columnVector(Array.from(b))).getColumn(0);
    expect(relativeError(x, reference)).toBeLessThan(1e-12);
    const inPlace = Float64Array.from(b);
    choleskySolve(factor, n, inPlace, inPlace);
    expect(Array.from(inPlace)).toEqual(Array.from(x));
  });

  it('names the failing pivot of an indefinite or singular matrix', () => {
    // [[1, 2], [2, 1]] has eigenvalues 3 and -1; [[1, 1], [1, 1]] has 2 and 0.
    expect(errorCode(() => choleskyFactor(Float64Array.of(1, 2, 2, 1), 2))).toBe(
      'E_LINALG_NOT_POSITIVE_DEFINITE',
    );
    expect(() => choleskyFactor(Float64Array.of(1, 1, 1, 1), 2)).toThrow(/pivot 1 of 2 is 0/);
    expect(errorCode(() => choleskyFactor(Float64Array.of(Number.NaN), 1))).toBe(
      'E_LINALG_NOT_POSITIVE_DEFINITE',
    );
    expect(errorCode(() => choleskyFactor(Float64Array.of(1, 0, 0), 2))).toBe('E_LINALG_DIMENSION');
  });
});
