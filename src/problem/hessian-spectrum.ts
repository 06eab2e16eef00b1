// The curvature of an objective at a point: the extreme eigenvalues of its Hessian, by Lanczos
// on Hessian-vector products (never a dense Hessian).

import {
  extremeEigenvalues,
  type ExtremeEigenvalues,
  type LanczosOptions,
} from '../linalg/spectrum.js';
import type { Objective } from './objective.js';

/** Smallest and largest eigenvalue of the Hessian of `objective` at `x`. */
export function hessianExtremeEigenvalues(
  objective: Objective,
  x: Float64Array,
  options: LanczosOptions = {},
): ExtremeEigenvalues {
  return extremeEigenvalues((v, out) => objective.hessianVector(x, v, out), objective.dim, options);
}
