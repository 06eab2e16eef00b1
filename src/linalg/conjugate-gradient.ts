// Conjugate gradients for A x = b with a symmetric positive (semi)definite A known only through
// products (Hestenes and Stiefel, J. Res. NBS 49(6), 1952; Nocedal and Wright, Numerical
// Optimization, 2nd ed., Alg. 5.2), from x = 0. The oracle solves the normal equations of least
// squares with it (A = A_data^T A_data / n + lambda I applied as two passes over the data, never
// formed) and the Newton systems of logistic and softmax (Alg. 7.1 of the same book: stop on the
// forcing tolerance, or on a direction of non-positive curvature).
//
// On a singular but consistent system (b in the range of A) the iterates stay in the Krylov space
// of b, inside the range, so the solution has no part along the null space: the minimum-norm one.

import { axpy, dot, norm2 } from '../vec/kernels.js';
import type { SymmetricOperator } from './spectrum.js';
import { LinalgError, assertLinalgLength } from './linalg-error.js';

export interface ConjugateGradientOptions {
  /** stop once the recurrence residual is at most this times ||b|| (default 1e-12) ... */
  relativeTolerance?: number;
  /** ... or at most this (default 0) */
  absoluteTolerance?: number;
  /** products with A at most (default: 2 dim, enough for rounding to settle past dim) */
  iterationsMax?: number;
}

export interface ConjugateGradientResult {
  solution: Float64Array;
  /** ||b - A x|| as the recurrence tracks it (the caller recomputes it when it matters) */
  residualNorm: number;
  /** products with A */
  iterations: number;
  /** the tolerance was met */
  converged: boolean;
  /**
   * a search direction p with p^T A p <= 0 (to rounding) ended the solve: A is not positive
   * definite on the Krylov space; the solution is the last iterate before that direction
   */
  nonPositiveCurvature: boolean;
}

const DEFAULT_RELATIVE_TOLERANCE = 1e-12;

export function conjugateGradient(
  apply: SymmetricOperator,
  rhs: Float64Array,
  options: ConjugateGradientOptions = {},
): ConjugateGradientResult {
  const dim = rhs.length;
  const relativeTolerance = options.relativeTolerance ?? DEFAULT_RELATIVE_TOLERANCE;
  const absoluteTolerance = options.absoluteTolerance ?? 0;
  const iterationsMax = options.iterationsMax ?? 2 * dim;
  if (!(relativeTolerance > 0) || !(absoluteTolerance >= 0)) {
    throw new LinalgError(
      'E_LINALG_ARGUMENT',
      `conjugate gradients need a positive relative and a non-negative absolute tolerance, got ${relativeTolerance} and ${absoluteTolerance}`,
    );
  }
  if (!Number.isInteger(iterationsMax) || iterationsMax < 1) {
    throw new LinalgError(
      'E_LINALG_ARGUMENT',
      `iterationsMax must be a positive integer, got ${iterationsMax}`,
    );
  }
  const solution = new Float64Array(dim);
  const residual = Float64Array.from(rhs);
  const direction = Float64Array.from(rhs);
  const product = new Float64Array(dim);
  let residualSquared = dot(residual, residual);
  const target = Math.max(relativeTolerance * Math.sqrt(residualSquared), absoluteTolerance);
  let residualNorm = Math.sqrt(residualSquared);
  let iterations = 0;
  let nonPositiveCurvature = false;
  while (residualNorm > target && iterations < iterationsMax) {
    apply(direction, product);
    assertLinalgLength('operator output', product, dim);
    iterations++;
    const curvature = dot(direction, product);
    // Rounding of the product is of order eps ||A|| ||p||^2; below it the sign means nothing.
    if (!(curvature > Number.EPSILON * norm2(product) * norm2(direction))) {
      nonPositiveCurvature = true;
      break;
    }
    const step = residualSquared / curvature;
    axpy(step, direction, solution);
    axpy(-step, product, residual);
    const nextSquared = dot(residual, residual);
    const beta = nextSquared / residualSquared;
    residualSquared = nextSquared;
    residualNorm = Math.sqrt(residualSquared);
    for (let j = 0; j < dim; j++) direction[j] = residual[j] + beta * direction[j];
  }
  return {
    solution,
    residualNorm,
    iterations,
    converged: residualNorm <= target,
    nonPositiveCurvature,
  };
}
