// Errors of the objectives and of the oracle that solves them. The code is stable so that the
// scenario loader, the runtimes and the tests can branch on the cause.

import { CodedError } from '../base/coded-error.js';

export type ProblemErrorCode =
  /** a shard whose arrays do not match its counts, or a shard with no samples */
  | 'E_PROBLEM_SHARD_SHAPE'
  /** a target outside its domain: not 0/1 for logistic, not a class index for softmax */
  | 'E_PROBLEM_TARGET'
  /** a feature, target, weight or operator output that is NaN or infinite */
  | 'E_PROBLEM_NOT_FINITE'
  /** a vector or matrix whose length does not match the dimension it is used with */
  | 'E_PROBLEM_DIMENSION'
  /** a minibatch that is empty or lists a sample index outside the shard */
  | 'E_PROBLEM_BATCH'
  /** client weights that are negative, of the wrong count, or sum to zero */
  | 'E_PROBLEM_WEIGHTS'
  /** an objective specification that cannot be built (unknown kind, classes < 2, lambda < 0) */
  | 'E_PROBLEM_SPEC'
  /** a matrix handed to Cholesky that is not (numerically) positive definite */
  | 'E_PROBLEM_NOT_POSITIVE_DEFINITE'
  /** an eigenvalue iteration that did not reach its tolerance within its iteration cap */
  | 'E_PROBLEM_NOT_CONVERGED'
  /** the oracle could not bring the gradient norm below its tolerance within its cap */
  | 'E_PROBLEM_NOT_CERTIFIED'
  /** a dense computation that would exceed its size limit */
  | 'E_PROBLEM_SIZE_LIMIT';

export class ProblemError extends CodedError<ProblemErrorCode> {}

/** Throws E_DIMENSION unless `vector` has `dim` entries. */
export function assertLength(name: string, vector: ArrayLike<number>, dim: number): void {
  if (vector.length !== dim) {
    throw new ProblemError(
      'E_PROBLEM_DIMENSION',
      `${name} has length ${vector.length}, expected ${dim}`,
    );
  }
}
