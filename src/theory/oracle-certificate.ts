// What the oracle returns and the one error it raises when it cannot certify, shared by its dense
// and its matrix-free solvers (dense-oracle.ts, krylov-oracle.ts).

import { ProblemError } from '../problem/problem-error.js';

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

export function notCertified(
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
