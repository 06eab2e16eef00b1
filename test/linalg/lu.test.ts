import { Matrix, solve } from 'ml-matrix';
import { describe, expect, it } from 'vitest';
import { Rng } from '../../src/base/rng.js';
import { luFactor, luSolve } from '../../src/linalg/lu.js';
import { LinalgError } from '../../src/linalg/linalg-error.js';
import { randomArray, randomMatrix } from '../theory/fixtures/affine-maps.js';
import { codeOf } from '../support/error-code.js';

const theoryErrorCode = (action: () => unknown): string => codeOf(action, LinalgError);

const rowMajor = (a: Matrix) => Float64Array.from(a.to1DArray());

describe('luFactor and luSolve', () => {
  it('solve random non-symmetric systems as ml-matrix solve (LU) does, to 1e-12 relative', () => {
    const rng = Rng.fromSeed(31);
    for (const n of [1, 2, 7, 40]) {
      const a = randomMatrix(rng, n);
      const b = randomArray(rng, n);
      const x = new Float64Array(n);
      luSolve(luFactor(rowMajor(a), n), Float64Array.from(b), x);
      const expected = solve(a, Matrix.columnVector(b)).getColumn(0);
      const error = Math.hypot(...expected.map((value, j) => value - x[j]));
      // A well-conditioned random system: both solutions are backward stable, so they agree to
      // roughly cond(A) * eps; 1e-12 leaves room for cond up to ~1e3 (common practice).
      expect(error).toBeLessThan(1e-12 * Math.hypot(...expected));
    }
  });

  it('pivots: a zero leading entry is no obstacle ([[0, 1], [1, 0]] x = (2, 3) gives x = (3, 2))', () => {
    const x = new Float64Array(2);
    luSolve(luFactor(Float64Array.of(0, 1, 1, 0), 2), Float64Array.of(2, 3), x);
    expect(Array.from(x)).toEqual([3, 2]);
  });

  it('refuses singular matrices, non-finite entries, wrong sizes and in-place solves with stable codes', () => {
    expect(theoryErrorCode(() => luFactor(Float64Array.of(1, 2, 2, 4), 2))).toBe(
      'E_LINALG_SINGULAR',
    );
    expect(theoryErrorCode(() => luFactor(Float64Array.of(1, NaN, 0, 1), 2))).toBe(
      'E_LINALG_NOT_FINITE',
    );
    expect(theoryErrorCode(() => luFactor(Float64Array.of(1, 0, 0), 2))).toBe('E_LINALG_DIMENSION');
    const factors = luFactor(Float64Array.of(2, 0, 0, 2), 2);
    const b = Float64Array.of(1, 1);
    expect(theoryErrorCode(() => luSolve(factors, b, b))).toBe('E_LINALG_ARGUMENT');
  });
});
