// Errors of the general linear algebra (factorizations, Krylov solvers, eigenvalue estimates).
// Codes carry the E_LINALG_ prefix so that a caller above (theory, problem) can tell a failed
// solve from its own refusals.

import { CodedError } from '../base/coded-error.js';

export type LinalgErrorCode =
  /** a matrix or vector whose length does not match the dimension it is used with */
  | 'E_LINALG_DIMENSION'
  /** an operator or matrix that produced or holds NaN or an infinity */
  | 'E_LINALG_NOT_FINITE'
  /** a dense computation beyond its size limit */
  | 'E_LINALG_SIZE_LIMIT'
  /** a linear system that is singular to working precision */
  | 'E_LINALG_SINGULAR'
  /** an iterative method that ran out of steps before its tolerance */
  | 'E_LINALG_NOT_CONVERGED'
  /** an option outside its domain (a tolerance that is not positive, no iterations) */
  | 'E_LINALG_ARGUMENT'
  /** a matrix or operator said to be (semi)definite that is not */
  | 'E_LINALG_NOT_POSITIVE_DEFINITE';

export class LinalgError extends CodedError<LinalgErrorCode> {}

/** Throws E_LINALG_DIMENSION unless `vector` has `length` entries. */
export function assertLinalgLength(name: string, vector: ArrayLike<number>, length: number): void {
  if (vector.length !== length) {
    throw new LinalgError(
      'E_LINALG_DIMENSION',
      `${name} has length ${vector.length}, expected ${length}`,
    );
  }
}
