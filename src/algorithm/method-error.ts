// Errors a method raises when an input breaks an invariant the method owns. The code is stable
// so that the engine and the coordinator can branch on the cause (E_NOT_FINITE: a client
// diverged; E_SEQUENCE: exchanges driven out of order) and tests can assert it.

import { CodedError } from '../base/coded-error.js';

export type MethodErrorCode =
  /** a method name the registry does not know */
  | 'E_METHOD_UNKNOWN'
  /** an exchange name the method does not have */
  | 'E_METHOD_EXCHANGE'
  /** a MethodConfig value, dimension or client id outside its domain */
  | 'E_METHOD_CONFIG'
  /** a named vector the method needs is absent */
  | 'E_METHOD_MISSING_FIELD'
  /** a vector or an objective whose length is not the state's dimension */
  | 'E_METHOD_DIMENSION'
  /** an upload or initial model with NaN or an infinity */
  | 'E_METHOD_NOT_FINITE'
  /** upload client ids out of range, unsorted or repeated */
  | 'E_METHOD_UPLOAD_ORDER'
  /** an upload weight that is not positive and finite */
  | 'E_METHOD_WEIGHT'
  /** local steps not an integer in [1, LOCAL_STEPS_MAX], or a step size not positive and finite */
  | 'E_METHOD_BUDGET'
  /** an exchange that needs an earlier exchange of the same round, called without it */
  | 'E_METHOD_SEQUENCE';

export class MethodError extends CodedError<MethodErrorCode> {}
