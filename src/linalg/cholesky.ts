// Dense Cholesky factorization A = L L^T of a symmetric positive definite matrix and the two
// triangular solves that use it (Golub and Van Loan, Matrix Computations, 4th ed., Alg. 4.2.2).
// Matrices are row-major Float64Array of n x n. The oracle uses it for the normal equations of
// least squares and for Newton steps, where n is at most a few thousand.

import { LinalgError, assertLinalgLength } from './linalg-error.js';

/**
 * The lower-triangular factor L (row-major, zeros above the diagonal) of the SPD matrix `a`. Reads
 * only the lower triangle of `a`. Throws E_NOT_POSITIVE_DEFINITE, naming the failing pivot, when a
 * pivot is not positive: the matrix is then indefinite or singular to working precision.
 */
export function choleskyFactor(a: Float64Array, n: number): Float64Array {
  if (!Number.isInteger(n) || n < 1) {
    throw new LinalgError('E_LINALG_DIMENSION', `a Cholesky factorization needs n >= 1, got ${n}`);
  }
  assertLinalgLength('matrix', a, n * n);
  const l = new Float64Array(n * n);
  for (let j = 0; j < n; j++) {
    const rowJ = j * n;
    let pivot = a[rowJ + j];
    for (let k = 0; k < j; k++) pivot -= l[rowJ + k] * l[rowJ + k];
    // `!(pivot > 0)` also catches NaN from a non-finite input.
    if (!(pivot > 0) || !Number.isFinite(pivot)) {
      throw new LinalgError(
        'E_LINALG_NOT_POSITIVE_DEFINITE',
        `matrix is not positive definite: pivot ${j} of ${n} is ${pivot}`,
      );
    }
    const diagonal = Math.sqrt(pivot);
    l[rowJ + j] = diagonal;
    for (let i = j + 1; i < n; i++) {
      const rowI = i * n;
      let sum = a[rowI + j];
      for (let k = 0; k < j; k++) sum -= l[rowI + k] * l[rowJ + k];
      l[rowI + j] = sum / diagonal;
    }
  }
  return l;
}

/** out <- A^{-1} b given the factor L of A (out may be b itself). */
export function choleskySolve(
  factor: Float64Array,
  n: number,
  b: Float64Array,
  out: Float64Array,
): void {
  assertLinalgLength('factor', factor, n * n);
  assertLinalgLength('right-hand side', b, n);
  assertLinalgLength('solution', out, n);
  // L y = b, forward.
  for (let i = 0; i < n; i++) {
    const rowI = i * n;
    let sum = b[i];
    for (let k = 0; k < i; k++) sum -= factor[rowI + k] * out[k];
    out[i] = sum / factor[rowI + i];
  }
  // L^T x = y, backward; column i of L is read with stride n.
  for (let i = n - 1; i >= 0; i--) {
    let sum = out[i];
    for (let k = i + 1; k < n; k++) sum -= factor[k * n + i] * out[k];
    out[i] = sum / factor[i * n + i];
  }
}
