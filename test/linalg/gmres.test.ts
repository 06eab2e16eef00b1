import { Matrix, inverse, solve } from 'ml-matrix';
import { describe, expect, it } from 'vitest';
import { Rng } from '../../src/base/rng.js';
import { gmres } from '../../src/linalg/gmres.js';
import { LinalgError } from '../../src/linalg/linalg-error.js';
import { randomArray, randomMatrix } from '../theory/fixtures/affine-maps.js';

const operatorOf = (a: Matrix) => (v: Float64Array) =>
  Float64Array.from(a.mmul(Matrix.columnVector(Array.from(v))).getColumn(0));
const distance = (a: ArrayLike<number>, b: ArrayLike<number>) =>
  Math.hypot(...Array.from(a, (value, j) => value - b[j]));
const norm = (a: ArrayLike<number>) => Math.hypot(...Array.from(a));

describe('gmres', () => {
  it('solves a non-symmetric system as ml-matrix solve (LU) does, in at most n products', () => {
    const rng = Rng.fromSeed(71);
    const n = 15;
    const a = randomMatrix(rng, n).add(Matrix.eye(n).mul(2));
    const b = randomArray(rng, n);
    const result = gmres(operatorOf(a), Float64Array.from(b), { relativeTolerance: 1e-13 });
    const expected = solve(a, Matrix.columnVector(b)).getColumn(0);
    // Residual 1e-13 relative on a system of condition ~10: the solutions agree to ~1e-12 (common practice).
    expect(distance(result.solution, expected)).toBeLessThan(1e-11 * norm(expected));
    // In exact arithmetic the Krylov space of R^n is exhausted within n steps (Saad and Schultz, 1986).
    expect(result.products).toBeLessThanOrEqual(n);
  });

  it('solves a consistent singular system (index 1) with no part along the null space', () => {
    const rng = Rng.fromSeed(72);
    // M = S diag(1, 1, 0.6, -0.4, 0.2, 0.9) S^{-1}; A = I - M is singular along the two 1s.
    const s = randomMatrix(rng, 6, Math.sqrt(6)).add(Matrix.eye(6).mul(2));
    const sInverse = inverse(s);
    const a = Matrix.eye(6).sub(s.mmul(Matrix.diag([1, 1, 0.6, -0.4, 0.2, 0.9])).mmul(sInverse));
    const rhs = operatorOf(a)(Float64Array.from(randomArray(rng, 6)));
    const result = gmres(operatorOf(a), rhs);
    // The default relative tolerance is 1e-10; 1e-9 leaves room for the rounding of the products.
    expect(distance(operatorOf(a)(result.solution), rhs)).toBeLessThan(1e-9 * norm(rhs));
    // Rows 0 and 1 of S^{-1} are the left eigenvectors of M for 1 (l^T A = 0): the conserved
    // quantities. They vanish on range(A), so l^T d = 0 says the solution lies in the range:
    // the solution the iteration s <- M s + r reaches, not one shifted along the null space.
    for (const row of [0, 1]) {
      const left = sInverse.getRow(row);
      expect(norm(Matrix.rowVector(left).mmul(a).getRow(0))).toBeLessThan(1e-12 * norm(left));
      const along = left.reduce((sum, l, j) => sum + l * result.solution[j], 0);
      // Zero but for rounding amplified by the solve, far below the 1e-9 of the residual.
      expect(Math.abs(along)).toBeLessThan(1e-9 * norm(left) * norm(result.solution));
    }
  });

  it('reports an inconsistent singular system as exhausted, with the part it cannot reach left over', () => {
    // A = diag(0, 1, 2): r = (1, 1, 1) has the part (1, 0, 0) outside the range.
    const a = Matrix.diag([0, 1, 2]);
    const result = gmres(operatorOf(a), Float64Array.of(1, 1, 1));
    expect(result.exhausted).toBe(true);
    // The least-squares residual cannot fall below the distance of r to range(A), which is 1.
    expect(result.residualNorm).toBeGreaterThanOrEqual(1 - 1e-12);
  });

  it('returns zero for a zero right-hand side and rejects bad options', () => {
    const result = gmres((v) => v, new Float64Array(3));
    expect(Array.from(result.solution)).toEqual([0, 0, 0]);
    expect(result.products).toBe(0);
    expect(() => gmres((v) => v, Float64Array.of(1), { iterationsMax: 0 })).toThrowError(
      LinalgError,
    );
    expect(() => gmres((v) => v, Float64Array.of(1), { relativeTolerance: 0 })).toThrowError(
      LinalgError,
    );
  });
});
