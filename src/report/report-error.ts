// Problems with a report's or a comparison's input. The CLI maps every code to exit code 2.

import { CodedError } from '../coded-error.js';

export type ReportErrorCode =
  /** the results folder or one of its files is missing or unreadable */
  | 'E_RESULTS_FILE'
  /** a results file does not hold what a run writes */
  | 'E_RESULTS_CONTENT'
  /** a --vary option is malformed or gives no values */
  | 'E_COMPARE_VARY'
  /** nothing to compare, or more variants than the limit */
  | 'E_COMPARE_VARIANTS';

export class ReportError extends CodedError<ReportErrorCode> {}
