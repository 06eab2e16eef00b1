// Errors of the distributed runtime that a caller may branch on (the CLI maps them to exit codes).

import { CodedError } from '../src/base/coded-error.js';

export type RuntimeErrorCode =
  /** the workers that joined cannot host every client, or a join timed out */
  | 'E_NOT_ENOUGH_WORKERS'
  /** every worker was lost; the run cannot go on */
  | 'E_ALL_WORKERS_LOST'
  /** the run was stopped (SIGINT, SIGTERM) */
  | 'E_STOPPED';

export class RuntimeError extends CodedError<RuntimeErrorCode> {}
