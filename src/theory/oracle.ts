// The testbed's oracle: the minimizer x* and the optimal value f* of an objective (usually the
// weighted sum over every client), solved to high accuracy once per plan. No method ever sees it.
//
// Two routes to the same certificate. Up to DENSE_DIMENSION_FASTER_MAX the Hessian is assembled
// as a d x d matrix and factored by Cholesky (dense-oracle.ts); above it nothing of size d x d is
// formed: conjugate gradients on least squares, Newton-CG on logistic and softmax, both on
// Hessian-vector products (krylov-oracle.ts). Either way the solver runs until the gradient norm
// is at or below the tolerance, and that norm, recomputed at the returned point, is the optimality
// certificate: for a mu-strongly convex f, ||x - x*|| <= ||grad f(x)|| / mu.

import type { Objective } from '../problem/objective.js';
import { ProblemError } from '../problem/problem-error.js';
import type { OptimumCertificate, OracleOptions } from './oracle-certificate.js';
import { solveByDenseNewton, solveLeastSquaresDense } from './dense-oracle.js';
import {
  solveByNewtonConjugateGradients,
  solveLeastSquaresByConjugateGradients,
} from './krylov-oracle.js';

export type { OptimumCertificate, OracleOptions } from './oracle-certificate.js';

/**
 * Changes whenever a solver's result may change; part of every cache key, so that a cached
 * answer of another version of the oracle is never read (plan-theory.ts).
 */
export const ORACLE_VERSION = 3;

const DEFAULT_GRADIENT_TOLERANCE = 1e-10;
const DEFAULT_ITERATIONS_MAX = 100;
/**
 * The dense route is kept up to this dimension. Measured once (best of 3 solves, 8 clients with
 * 10 d samples in all, feature condition number 10, lambda 1e-3, on the shared 2-core x64 machine
 * under load): up to d = 32 both routes take under 3 ms and neither wins consistently; at d = 48
 * the matrix-free one is 3x faster (least squares 45 against 14 ms, logistic 123 against 46 ms),
 * at d = 128 4x and 9x, at d = 256 5x and 16x (1.8 s against 0.33 s, 13.3 s against 0.82 s).
 * Where it costs nothing, dense stays: Cholesky needs no iteration count on ill-conditioned or
 * singular Hessians.
 */
export const DENSE_DIMENSION_FASTER_MAX = 32;

/**
 * Minimizes `objective` to a certified gradient norm. Throws E_PROBLEM_NOT_CERTIFIED (stating the
 * norm it reached) when it cannot, e.g. a logistic problem with lambda = 0 on separable data,
 * which has no minimizer; E_LINALG_NOT_POSITIVE_DEFINITE for least squares without a unique
 * minimizer.
 */
export function solveOptimum(
  objective: Objective,
  options: OracleOptions = {},
): OptimumCertificate {
  const tolerance = options.gradientTolerance ?? DEFAULT_GRADIENT_TOLERANCE;
  const iterationsMax = options.iterationsMax ?? DEFAULT_ITERATIONS_MAX;
  if (!(tolerance > 0) || !Number.isInteger(iterationsMax) || iterationsMax < 1) {
    throw new ProblemError(
      'E_PROBLEM_SPEC',
      `oracle needs a positive tolerance and iteration cap, got ${tolerance} and ${iterationsMax}`,
    );
  }
  const dense = objective.dim <= DENSE_DIMENSION_FASTER_MAX;
  if (objective.kind === 'least-squares') {
    return dense
      ? solveLeastSquaresDense(objective, tolerance, iterationsMax)
      : solveLeastSquaresByConjugateGradients(objective, tolerance, iterationsMax);
  }
  return dense
    ? solveByDenseNewton(objective, tolerance, iterationsMax)
    : solveByNewtonConjugateGradients(objective, tolerance, iterationsMax);
}
