// Dense LU factorization with partial pivoting, P A = L U (Golub and Van Loan, Matrix
// Computations, 4th ed., Alg. 3.4.1), and the solve that uses it. The fixed points of round maps
// need it for I - M, which is neither symmetric nor definite, so Cholesky does not apply.
// Matrices are row-major Float64Array of n x n, n at most a few thousand.

import { allFinite } from '../vec/kernels.js';
import { LinalgError, assertLinalgLength } from './linalg-error.js';

export interface LuFactors {
  n: number;
  /** L below the diagonal (unit diagonal implied) and U on and above it, row-major */
  lu: Float64Array;
  /** row i of P A is row pivots[i] of A */
  pivots: Uint32Array;
}

/**
 * Factors `a` (not modified). Throws E_SINGULAR, naming the column, when a pivot is at or below
 * n * eps * max |a_ij|: the matrix is singular to working precision and a solve would return noise.
 */
export function luFactor(a: Float64Array, n: number): LuFactors {
  if (!Number.isInteger(n) || n < 1)
    throw new LinalgError('E_LINALG_DIMENSION', `an LU factorization needs n >= 1, got ${n}`);
  assertLinalgLength('matrix', a, n * n);
  if (!allFinite(a))
    throw new LinalgError('E_LINALG_NOT_FINITE', 'the matrix to factor has a non-finite entry');
  const lu = Float64Array.from(a);
  const pivots = new Uint32Array(n);
  for (let i = 0; i < n; i++) pivots[i] = i;
  let largest = 0;
  for (let k = 0; k < lu.length; k++) largest = Math.max(largest, Math.abs(lu[k]));
  const negligible = n * Number.EPSILON * largest;

  for (let k = 0; k < n; k++) {
    let pivotRow = k;
    let pivotSize = Math.abs(lu[k * n + k]);
    for (let i = k + 1; i < n; i++) {
      const size = Math.abs(lu[i * n + k]);
      if (size > pivotSize) {
        pivotSize = size;
        pivotRow = i;
      }
    }
    if (pivotSize <= negligible) {
      throw new LinalgError(
        'E_LINALG_SINGULAR',
        `matrix is singular to working precision: pivot ${k} of ${n} is ${pivotSize}`,
      );
    }
    if (pivotRow !== k) {
      for (let j = 0; j < n; j++) {
        const held = lu[k * n + j];
        lu[k * n + j] = lu[pivotRow * n + j];
        lu[pivotRow * n + j] = held;
      }
      const heldIndex = pivots[k];
      pivots[k] = pivots[pivotRow];
      pivots[pivotRow] = heldIndex;
    }
    const rowK = k * n;
    const pivot = lu[rowK + k];
    for (let i = k + 1; i < n; i++) {
      const rowI = i * n;
      const multiplier = lu[rowI + k] / pivot;
      lu[rowI + k] = multiplier;
      if (multiplier === 0) continue;
      for (let j = k + 1; j < n; j++) lu[rowI + j] -= multiplier * lu[rowK + j];
    }
  }
  return { n, lu, pivots };
}

/** out <- A^{-1} b from the factors of A (out must not be b). */
export function luSolve(factors: LuFactors, b: Float64Array, out: Float64Array): void {
  const { n, lu, pivots } = factors;
  assertLinalgLength('right-hand side', b, n);
  assertLinalgLength('solution', out, n);
  if (out === b) throw new LinalgError('E_LINALG_ARGUMENT', 'luSolve cannot solve in place');
  // L y = P b, forward, unit diagonal.
  for (let i = 0; i < n; i++) {
    const rowI = i * n;
    let sum = b[pivots[i]];
    for (let k = 0; k < i; k++) sum -= lu[rowI + k] * out[k];
    out[i] = sum;
  }
  // U x = y, backward.
  for (let i = n - 1; i >= 0; i--) {
    const rowI = i * n;
    let sum = out[i];
    for (let k = i + 1; k < n; k++) sum -= lu[rowI + k] * out[k];
    out[i] = sum / lu[rowI + i];
  }
}
