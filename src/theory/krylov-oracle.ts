// The oracle's matrix-free solvers: nothing of size d x d is assembled, only Hessian-vector
// products (two passes over the data each). Least squares: conjugate gradients on the normal
// equations H x = -grad f(0), restarted from the recomputed gradient (iterative refinement with CG
// as the inner solver) until the gradient norm is at the tolerance; where the objective has
// formed its Hessian's data part for its extreme eigenvalues (formedHessian, many more samples
// than features), CG applies that matrix instead of the data, and only the gradients that drive
// the refinement and certify the result read the data. Logistic and softmax: line-search
// Newton-CG (Nocedal and Wright, Numerical Optimization, 2nd ed., Alg. 7.1) with the forcing
// sequence min(0.5, sqrt ||grad f||), which converges superlinearly (their Thm 7.2), and Armijo
// backtracking. The certificate is the same as the dense solvers': ||grad f|| recomputed at the
// returned point.

import { hessianOperatorOf, type Objective } from '../problem/objective.js';
import { axpy, norm2 } from '../vec/kernels.js';
import { LinalgError } from '../linalg/linalg-error.js';
import { conjugateGradient } from '../linalg/conjugate-gradient.js';
import { notCertified, type OptimumCertificate } from './oracle-certificate.js';
import { dampedNewton } from './line-search.js';

/**
 * The inner solve of least squares stops at this fraction of the tolerance (recurrence residual),
 * or at LEAST_SQUARES_RELATIVE_FLOOR times the right-hand side, below which rounding of the
 * products dominates and the outer refinement takes over.
 */
const INNER_FRACTION_OF_TOLERANCE = 0.25;
const LEAST_SQUARES_RELATIVE_FLOOR = 1e-13;
/** Newton's forcing term is min(FORCING_MAX, sqrt ||grad f||) (Nocedal and Wright, section 7.1). */
const FORCING_MAX = 0.5;

/**
 * A least-squares Hessian whose smallest eigenvalue is at the rounding level of its largest has no
 * unique minimizer to certify (lambda = 0 with fewer samples than features): the same refusal as
 * the dense Cholesky's.
 */
function refuseSingular(objective: Objective): void {
  const smoothness = objective.smoothnessBound();
  const strongConvexity = objective.strongConvexityBound();
  if (!(strongConvexity > objective.dim * Number.EPSILON * smoothness)) {
    throw new LinalgError(
      'E_LINALG_NOT_POSITIVE_DEFINITE',
      `the least-squares Hessian is singular to working precision (mu = ${strongConvexity}, L = ${smoothness}): no unique minimizer`,
    );
  }
}

export function solveLeastSquaresByConjugateGradients(
  objective: Objective,
  tolerance: number,
  iterationsMax: number,
): OptimumCertificate {
  refuseSingular(objective);
  const n = objective.dim;
  const x = new Float64Array(n);
  const gradient = new Float64Array(n);
  const apply = objective.formedHessian?.() ?? hessianOperatorOf(objective, x);
  objective.gradient(x, gradient);
  let gradientNorm = norm2(gradient);
  let iterations = 0;
  while (gradientNorm > tolerance && iterations < iterationsMax) {
    const inner = conjugateGradient(apply, gradient, {
      relativeTolerance: LEAST_SQUARES_RELATIVE_FLOOR,
      absoluteTolerance: INNER_FRACTION_OF_TOLERANCE * tolerance,
    });
    if (inner.nonPositiveCurvature && inner.iterations === 1) {
      throw new LinalgError(
        'E_LINALG_NOT_POSITIVE_DEFINITE',
        'the least-squares Hessian has no curvature along the gradient: no unique minimizer',
      );
    }
    axpy(-1, inner.solution, x);
    iterations++;
    objective.gradient(x, gradient);
    const previousNorm = gradientNorm;
    gradientNorm = norm2(gradient);
    // Stop once refinement stops paying: at the tolerance, or when rounding stalls it.
    if (iterations >= 2 && gradientNorm >= 0.5 * previousNorm) break;
  }
  if (!(gradientNorm <= tolerance)) {
    throw notCertified(
      gradientNorm,
      tolerance,
      iterations,
      'conjugate gradients with refinement stalled at rounding level',
    );
  }
  return { x, loss: objective.loss(x), gradientNorm, iterations };
}

export function solveByNewtonConjugateGradients(
  objective: Objective,
  tolerance: number,
  iterationsMax: number,
): OptimumCertificate {
  const descent = new Float64Array(objective.dim);
  return dampedNewton(objective, tolerance, iterationsMax, (state) => {
    for (let j = 0; j < descent.length; j++) descent[j] = -state.gradient[j];
    const inner = conjugateGradient(hessianOperatorOf(objective, state.x), descent, {
      relativeTolerance: Math.min(FORCING_MAX, Math.sqrt(state.gradientNorm)),
    });
    // A first direction of no curvature leaves nothing better than steepest descent (Alg. 7.1).
    return norm2(inner.solution) > 0 ? inner.solution : descent;
  });
}
