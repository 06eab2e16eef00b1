// The testbed's oracle: the minimizer x* and the optimal value f* of an objective (usually the
// weighted sum over every client), solved to high accuracy once per plan. No method ever sees it.
//
// Least squares: the Hessian is constant, so the normal equations H x = -grad f(0) are assembled
// from Hessian-vector products against unit vectors and solved by Cholesky, then polished by
// iterative refinement (the residual is the gradient itself, computed from the data).
// Logistic and softmax: Newton's method on the Hessian assembled the same way, with Armijo
// backtracking (Nocedal and Wright, Numerical Optimization, 2nd ed., Alg. 3.1), until the
// gradient norm is at or below the tolerance. That norm, recomputed at the returned point, is the
// optimality certificate: for a mu-strongly convex f, ||x - x*|| <= ||grad f(x)|| / mu.

import type { Objective } from '../problem/objective.js';
import { ProblemError } from '../problem/problem-error.js';
import { axpy, dot, norm2, scale } from '../vec/kernels.js';
import { LinalgError } from '../linalg/linalg-error.js';
import { choleskyFactor, choleskySolve } from '../linalg/cholesky.js';

export interface OptimumCertificate {
  x: Float64Array;
  /** f(x*) */
  loss: number;
  /** ||grad f(x*)||, recomputed at the returned x */
  gradientNorm: number;
  /** linear solves (least squares) or Newton steps (logistic, softmax) */
  iterations: number;
}

export interface OracleOptions {
  /** certify once ||grad f|| is at or below this (default 1e-10) */
  gradientTolerance?: number;
  /** Newton steps or refinement steps at most (default 100) */
  iterationsMax?: number;
}

const DEFAULT_GRADIENT_TOLERANCE = 1e-10;
const DEFAULT_ITERATIONS_MAX = 100;
/** A dense dim x dim Hessian of this size is 32 MiB; beyond it the oracle refuses. */
const DENSE_DIMENSION_MAX = 2048;
/** Armijo's sufficient-decrease constant and the backtracking factor (Nocedal and Wright, section 3.1). */
const ARMIJO_DECREASE = 1e-4;
const BACKTRACK_FACTOR = 0.5;
const BACKTRACK_STEPS_MAX = 60;
/** Diagonal shifts tried, each ten times the last, when the Hessian is singular to working precision. */
const SHIFT_ATTEMPTS_MAX = 12;

/** The Hessian of `objective` at x as a dense symmetric row-major matrix, column by column. */
export function assembleHessian(objective: Objective, x: Float64Array): Float64Array {
  const n = objective.dim;
  if (n > DENSE_DIMENSION_MAX) {
    throw new ProblemError(
      'E_PROBLEM_SIZE_LIMIT',
      `the oracle assembles dense Hessians up to dimension ${DENSE_DIMENSION_MAX}, got ${n}`,
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

function notCertified(
  reached: number,
  tolerance: number,
  iterations: number,
  why: string,
): ProblemError {
  return new ProblemError(
    'E_PROBLEM_NOT_CERTIFIED',
    `oracle reached ||grad f|| = ${reached.toExponential(3)} after ${iterations} iterations, above the tolerance ${tolerance} (${why})`,
  );
}

function solveLeastSquares(
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

function solveByNewton(
  objective: Objective,
  tolerance: number,
  iterationsMax: number,
): OptimumCertificate {
  const n = objective.dim;
  const x = new Float64Array(n);
  const gradient = new Float64Array(n);
  const direction = new Float64Array(n);
  const trial = new Float64Array(n);
  const trialGradient = new Float64Array(n);
  let loss = objective.loss(x);
  objective.gradient(x, gradient);
  let gradientNorm = norm2(gradient);
  let iterations = 0;
  while (gradientNorm > tolerance) {
    if (iterations >= iterationsMax)
      throw notCertified(gradientNorm, tolerance, iterations, 'iteration cap');
    const factor = factorWithShift(assembleHessian(objective, x), n);
    choleskySolve(factor, n, gradient, direction);
    scale(-1, direction);
    const slope = dot(gradient, direction);
    let t = 1;
    let accepted = false;
    for (let k = 0; k < BACKTRACK_STEPS_MAX; k++) {
      trial.set(x);
      axpy(t, direction, trial);
      const trialLoss = objective.loss(trial);
      objective.gradient(trial, trialGradient);
      const trialNorm = norm2(trialGradient);
      // Near x* the decrease t * slope falls below the rounding of f itself and Armijo's test
      // turns into noise; the full Newton step is then judged by the gradient norm instead.
      const armijo = trialLoss <= loss + ARMIJO_DECREASE * t * slope;
      const belowRounding = -slope <= 1e-12 * Math.max(1, Math.abs(loss));
      if (armijo || (belowRounding && trialNorm < gradientNorm)) {
        x.set(trial);
        gradient.set(trialGradient);
        loss = trialLoss;
        gradientNorm = trialNorm;
        accepted = true;
        break;
      }
      t *= BACKTRACK_FACTOR;
    }
    iterations++;
    if (!accepted)
      throw notCertified(gradientNorm, tolerance, iterations, 'line search found no decrease');
  }
  return { x, loss, gradientNorm, iterations };
}

/**
 * Minimizes `objective` to a certified gradient norm. Throws E_PROBLEM_NOT_CERTIFIED (stating the norm it
 * reached) when it cannot, e.g. a logistic problem with lambda = 0 on separable data, which has no
 * minimizer; E_SIZE_LIMIT when the dense Hessian would be too large.
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
  return objective.kind === 'least-squares'
    ? solveLeastSquares(objective, tolerance, iterationsMax)
    : solveByNewton(objective, tolerance, iterationsMax);
}
