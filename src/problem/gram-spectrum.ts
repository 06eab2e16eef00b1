// The extreme eigenvalues of a shard's Gram matrix A^T A / n, which fix the curvature bounds of
// all three objectives. The p x p matrix is never formed: Lanczos only needs v -> A^T (A v) / n,
// two passes over the data, and the extremes usually converge long before p steps.

import type { Shard } from './shard.js';
import { matTVec, matVec, scale } from '../vec/kernels.js';
import { semidefiniteExtremeEigenvalues } from '../linalg/spectrum.js';

export interface GramExtremes {
  /** 0 when the shard has fewer independent rows than features (to rounding) */
  smallest: number;
  largest: number;
}

export function gramExtremeEigenvalues(shard: Shard): GramExtremes {
  const { sampleCount: n, featureCount: p, features } = shard;
  const projected = new Float64Array(n);
  const { smallest, largest } = semidefiniteExtremeEigenvalues((v, out) => {
    matVec(features, n, p, v, projected);
    matTVec(features, n, p, projected, out);
    scale(1 / n, out);
  }, p);
  return { smallest, largest };
}
