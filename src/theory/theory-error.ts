// Errors of the predictions and measurements in src/theory (affine maps, rates, fixed points,
// fitted curves). The code is stable so that the engine and the report can branch on the cause:
// E_SINGULAR, for instance, means that a method's round map has no unique limit to predict.

import { CodedError } from '../base/coded-error.js';

export type TheoryErrorCode =
  /** a state, matrix or vector whose length does not match the dimension it is used with */
  | 'E_THEORY_DIMENSION'
  /** a round map, matrix or curve point that produced or holds NaN or an infinity */
  | 'E_THEORY_NOT_FINITE'
  /** a dense computation beyond its size limit */
  | 'E_THEORY_SIZE_LIMIT'
  /** a linear system that is singular to working precision, or a round map with no fixed point in reach */
  | 'E_THEORY_SINGULAR'
  /** an iterative solve that ran out of steps before its tolerance */
  | 'E_THEORY_NOT_CONVERGED'
  /** an option or argument outside its domain (a tolerance that is not positive, a negative weight) */
  | 'E_THEORY_ARGUMENT'
  /** curve points out of order or with rounds that are not finite */
  | 'E_THEORY_POINTS';

export class TheoryError extends CodedError<TheoryErrorCode> {}

/** Throws E_DIMENSION unless `vector` has `length` entries. */
export function assertTheoryLength(name: string, vector: ArrayLike<number>, length: number): void {
  if (vector.length !== length) {
    throw new TheoryError(
      'E_THEORY_DIMENSION',
      `${name} has length ${vector.length}, expected ${length}`,
    );
  }
}
