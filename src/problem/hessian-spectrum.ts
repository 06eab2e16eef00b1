// The curvature of an objective at a point: the extreme eigenvalues of its Hessian, by Lanczos
// on Hessian-vector products (never a dense Hessian), through the objective's own operator at x
// where it has one (each sample's curvature computed once, not once per product).

import {
  extremeEigenvalues,
  type ExtremeEigenvalues,
  type LanczosOptions,
} from '../linalg/spectrum.js';
import { hessianOperatorOf, type Objective } from './objective.js';

/** Smallest and largest eigenvalue of the Hessian of `objective` at `x`. */
export function hessianExtremeEigenvalues(
  objective: Objective,
  x: Float64Array,
  options: LanczosOptions = {},
): ExtremeEigenvalues {
  return extremeEigenvalues(hessianOperatorOf(objective, x), objective.dim, options);
}
