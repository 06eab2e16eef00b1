// The oracle's dense solvers, for dimensions small enough that a d x d matrix is the faster route
// (oracle.ts holds the crossover): least squares by Cholesky of the normal equations assembled
// from Hessian-vector products against unit vectors, polished by iterative refinement (the
// residual is the gradient itself, computed from the data); logistic and softmax by Newton's
// method on the Hessian assembled the same way, with Armijo backtracking.

import type { Objective } from '../problem/objective.js';
import { ProblemError } from '../problem/problem-error.js';
import { axpy, norm2, scale } from '../vec/kernels.js';
import { LinalgError } from '../linalg/linalg-error.js';
import { choleskyFactor, choleskySolve } from '../linalg/cholesky.js';
import { notCertified, type OptimumCertificate } from './oracle-certificate.js';
import { dampedNewton } from './line-search.js';

/** A dense dim x dim matrix of this size is 32 MiB; beyond it assembleHessian refuses. */
const DENSE_DIMENSION_MAX = 2048;
/** Diagonal shifts tried, each ten times the last, when the Hessian is singular to working precision. */
const SHIFT_ATTEMPTS_MAX = 12;

/** The Hessian of `objective` at x as a dense symmetric row-major matrix, column by column. */
export function assembleHessian(objective: Objective, x: Float64Array): Float64Array {
  const n = objective.dim;
  if (n > DENSE_DIMENSION_MAX) {
    throw new ProblemError(
      'E_PROBLEM_SIZE_LIMIT',
      `dense Hessians are assembled up to dimension ${DENSE_DIMENSION_MAX}, got ${n}`,
    );
  }
  const h = new Float64Array(n * n);
  const unit = new Float64Array(n);
  const column = new Float64Array(n);
  for (let j = 0; j < n; j++) {
    unit[j] = 1;
    objective.hessianVector(x, unit, column);
    unit[j] = 0;
    for (let i = 0; i < n; i++) h[i * n + j] = column[i];
  }
  // Products are symmetric only to rounding; Cholesky reads one triangle, so average the two.
  for (let i = 0; i < n; i++) {
    for (let j = 0; j < i; j++) {
      const mean = 0.5 * (h[i * n + j] + h[j * n + i]);
      h[i * n + j] = mean;
      h[j * n + i] = mean;
    }
  }
  return h;
}

/**
 * Factor H, or H + delta I with the smallest delta in a growing sequence that makes it positive
 * definite: a Hessian singular to working precision (lambda = 0 and too few samples, or the flat
 * class-shift directions of softmax) still yields a descent direction.
 */
function factorWithShift(h: Float64Array, n: number): Float64Array {
  try {
    return choleskyFactor(h, n);
  } catch (error) {
    if (!(error instanceof LinalgError) || error.code !== 'E_LINALG_NOT_POSITIVE_DEFINITE')
      throw error;
  }
  let diagonalMax = 0;
  for (let j = 0; j < n; j++) diagonalMax = Math.max(diagonalMax, Math.abs(h[j * n + j]));
  let shift = Math.max(diagonalMax, Number.MIN_VALUE) * 1e-12;
  for (let attempt = 0; attempt < SHIFT_ATTEMPTS_MAX; attempt++) {
    const shifted = Float64Array.from(h);
    for (let j = 0; j < n; j++) shifted[j * n + j] += shift;
    try {
      return choleskyFactor(shifted, n);
    } catch (error) {
      if (!(error instanceof LinalgError) || error.code !== 'E_LINALG_NOT_POSITIVE_DEFINITE')
        throw error;
    }
    shift *= 10;
  }
  throw new ProblemError(
    'E_PROBLEM_NOT_POSITIVE_DEFINITE',
    `the Hessian stays indefinite after a diagonal shift of ${shift / 10}`,
  );
}

export function solveLeastSquaresDense(
  objective: Objective,
  tolerance: number,
  iterationsMax: number,
): OptimumCertificate {
  const n = objective.dim;
  const x = new Float64Array(n);
  const gradient = new Float64Array(n);
  const step = new Float64Array(n);
  const factor = choleskyFactor(assembleHessian(objective, x), n);
  // At x = 0 the gradient is -rhs; each later gradient is the residual H x - rhs of the current x.
  objective.gradient(x, gradient);
  let gradientNorm = norm2(gradient);
  let iterations = 0;
  while (iterations < iterationsMax) {
    choleskySolve(factor, n, gradient, step);
    axpy(-1, step, x);
    iterations++;
    objective.gradient(x, gradient);
    const previousNorm = gradientNorm;
    gradientNorm = norm2(gradient);
    // Stop once refinement stops paying: at the tolerance, or when rounding stalls it.
    if (gradientNorm <= tolerance || (iterations >= 2 && gradientNorm >= 0.5 * previousNorm)) break;
  }
  if (!(gradientNorm <= tolerance)) {
    throw notCertified(
      gradientNorm,
      tolerance,
      iterations,
      'iterative refinement stalled at rounding level',
    );
  }
  return { x, loss: objective.loss(x), gradientNorm, iterations };
}

export function solveByDenseNewton(
  objective: Objective,
  tolerance: number,
  iterationsMax: number,
): OptimumCertificate {
  const n = objective.dim;
  const direction = new Float64Array(n);
  return dampedNewton(objective, tolerance, iterationsMax, (state) => {
    const factor = factorWithShift(assembleHessian(objective, state.x), n);
    choleskySolve(factor, n, state.gradient, direction);
    scale(-1, direction);
    return direction;
  });
}
