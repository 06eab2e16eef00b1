// The extreme eigenvalues of a shard's Gram matrix A^T A / n, which fix the curvature bounds of
// all three objectives. The p x p matrix is never formed: Lanczos only needs v -> A^T (A v) / n,
// two passes over the data on the row kernels (vec/row-matrix.ts), and the extremes usually
// converge long before p steps. With fewer samples than features (n < p) the matrix has rank at
// most n, so its smallest eigenvalue is exactly 0, and its nonzero spectrum is that of the n x n
// matrix A A^T / n (Golub and Van Loan, Matrix Computations, 4th ed., section 8.6.1: both are the
// squared singular values of A / sqrt(n)): Lanczos runs there, on vectors of length n, and ends
// after at most n steps; up to ROW_GRAM_SAMPLES_MAX samples that n x n matrix is formed first.

import { scale } from '../vec/kernels.js';
import type { RowMatrix } from '../vec/row-matrix.js';
import {
  largestEigenvalue,
  semidefiniteExtremeEigenvalues,
  type SymmetricOperator,
} from '../linalg/spectrum.js';

export interface GramExtremes {
  /** 0 when the shard has fewer independent rows than features (to rounding) */
  smallest: number;
  largest: number;
}

/**
 * A A^T / n is formed up to this many samples: n^2 p / 2 products once, against 2 n p for every
 * product through the data, so forming wins once Lanczos (or CG) needs more than n / 4 steps.
 */
export const ROW_GRAM_SAMPLES_MAX = 64;

/** v -> A^T (A v) / n on R^p. */
function primalGram(matrix: RowMatrix): SymmetricOperator {
  const n = matrix.rowCount;
  return (v, out) => {
    out.fill(0);
    matrix.projectCombine(v, null, out);
    scale(1 / n, out);
  };
}

/** u -> A (A^T u) / n on R^n. */
function dualGram(matrix: RowMatrix): SymmetricOperator {
  const n = matrix.rowCount;
  const lifted = new Float64Array(matrix.columnCount);
  return (u, out) => {
    lifted.fill(0);
    matrix.rowCombine(u, null, lifted, 0);
    matrix.rowDots(lifted, 0, null, out);
    scale(1 / n, out);
  };
}

/**
 * A A^T / n, n x n and row-major: entry (r, c) is a_c . a_r / n on the row kernels, computed for
 * c <= r and copied across the diagonal, so the matrix is exactly symmetric.
 */
export function rowGram(matrix: RowMatrix): Float64Array {
  const { rowCount: n, columnCount: p, values } = matrix;
  const gram = new Float64Array(n * n);
  const rows = Uint32Array.from({ length: n }, (_, s) => s);
  const dots = new Float64Array(n);
  for (let r = 0; r < n; r++) {
    matrix.rowDots(values, r * p, rows.subarray(0, r + 1), dots);
    for (let c = 0; c <= r; c++) {
      gram[r * n + c] = dots[c] / n;
      gram[c * n + r] = dots[c] / n;
    }
  }
  return gram;
}

/** v -> M v for a dense symmetric n x n matrix M, row-major. */
function denseOperator(m: Float64Array, n: number): SymmetricOperator {
  return (v, out) => {
    for (let r = 0; r < n; r++) {
      let sum = 0;
      for (let c = 0; c < n; c++) sum += m[r * n + c] * v[c];
      out[r] = sum;
    }
  };
}

export function gramExtremeEigenvalues(matrix: RowMatrix): GramExtremes {
  if (matrix.rowCount < matrix.columnCount)
    return { smallest: 0, largest: gramLargestEigenvalue(matrix) };
  const { smallest, largest } = semidefiniteExtremeEigenvalues(
    primalGram(matrix),
    matrix.columnCount,
  );
  return { smallest, largest };
}

/** lambda_max(A^T A / n) alone, on the smaller of the two sides. */
export function gramLargestEigenvalue(matrix: RowMatrix): number {
  const n = matrix.rowCount;
  if (n >= matrix.columnCount)
    return largestEigenvalue(primalGram(matrix), matrix.columnCount).largest;
  const apply = n <= ROW_GRAM_SAMPLES_MAX ? denseOperator(rowGram(matrix), n) : dualGram(matrix);
  return largestEigenvalue(apply, n).largest;
}
