// When the data part of a least-squares Hessian over many shards, sum_i w_i A_i^T A_i, is formed
// as a d x d matrix (vec/gram-matrix.ts) instead of being applied through the data at every
// product. Forming reads the data once and costs n d^2 / 2 products with the operands in cache;
// a matrix-free product costs 2 n d streamed from the data. The global problem's extreme
// eigenvalues to the Lanczos tolerance, then the oracle's conjugate gradients, take a few hundred
// products: measured on 1,000 clients x 20 samples at d = 1,000 (CPU seconds, the shared 2-core
// EPYC under load), the 207 Lanczos products took 7.1 s through the data, while forming took
// 2.4 s and the same Lanczos on the formed matrix 0.5 s; at d = 2,000 with 2 clients x 2,000
// samples, L, mu and x* took 7.4 s formed against 10.3 s through the data. So the matrix is
// formed when there are at least as many samples as features (below that, the data part's
// smallest eigenvalue is 0 and Lanczos only seeks the largest, a few dozen products), up to a
// dimension whose matrix is cheap to hold.

import { GRAM_PANEL_ROWS } from '../vec/gram-matrix.js';

/** d^2 float64 values: 32 MiB at this dimension, beside the shards' own n d. */
export const FORMED_GRAM_DIMENSION_MAX = 2048;

export function formedGramPays(sampleCount: number, dim: number): boolean {
  return sampleCount >= dim && dim <= FORMED_GRAM_DIMENSION_MAX;
}

/** Float64 values a formed Gram matrix holds: the matrix and its two panels (gram-matrix.ts). */
export function formedGramValues(dim: number): number {
  return dim * dim + 2 * dim * GRAM_PANEL_ROWS;
}
