// The extreme eigenvalues of a shard's Gram matrix A^T A / n, which fix the curvature bounds of
// all three objectives. The p x p matrix is never formed: Lanczos only needs v -> A^T (A v) / n,
// two passes over the data, and the extremes usually converge long before p steps. With fewer
// samples than features (n < p) the matrix has rank at most n, so its smallest eigenvalue is
// exactly 0, and its nonzero spectrum is that of the n x n matrix A A^T / n (Golub and Van Loan,
// Matrix Computations, 4th ed., section 8.6.1: both are the squared singular values of A / sqrt(n)):
// Lanczos runs there, on vectors of length n, and ends after at most n steps.

import type { Shard } from './shard.js';
import { matTVec, matVec, scale } from '../vec/kernels.js';
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

/** v -> A^T (A v) / n on R^p. */
function primalGram(shard: Shard): SymmetricOperator {
  const { sampleCount: n, featureCount: p, features } = shard;
  const projected = new Float64Array(n);
  return (v, out) => {
    matVec(features, n, p, v, projected);
    matTVec(features, n, p, projected, out);
    scale(1 / n, out);
  };
}

/** u -> A (A^T u) / n on R^n. */
function dualGram(shard: Shard): SymmetricOperator {
  const { sampleCount: n, featureCount: p, features } = shard;
  const lifted = new Float64Array(p);
  return (u, out) => {
    matTVec(features, n, p, u, lifted);
    matVec(features, n, p, lifted, out);
    scale(1 / n, out);
  };
}

export function gramExtremeEigenvalues(shard: Shard): GramExtremes {
  if (shard.sampleCount < shard.featureCount)
    return { smallest: 0, largest: gramLargestEigenvalue(shard) };
  const { smallest, largest } = semidefiniteExtremeEigenvalues(
    primalGram(shard),
    shard.featureCount,
  );
  return { smallest, largest };
}

/** lambda_max(A^T A / n) alone, on the smaller of the two sides. */
export function gramLargestEigenvalue(shard: Shard): number {
  const dual = shard.sampleCount < shard.featureCount;
  return largestEigenvalue(
    dual ? dualGram(shard) : primalGram(shard),
    dual ? shard.sampleCount : shard.featureCount,
  ).largest;
}
