// Problems with a report's or a comparison's input. The CLI maps every code to exit code 2.

import { CodedError } from '../base/coded-error.js';

export type ReportErrorCode =
  /** the results folder or one of its files is missing or unreadable */
  | 'E_RESULTS_FILE'
  /** a results file does not hold what a run writes */
  | 'E_RESULTS_CONTENT'
  /** a --ladder option does not follow the grammar (colon, rungs, one value per field) */
  | 'E_LADDER_SYNTAX'
  /** a field moved by two ladders, or too many ladders */
  | 'E_LADDER_FIELDS'
  /** a rung the scenario rejects, a rung given twice, or too many rungs */
  | 'E_LADDER_RUNG'
  /** nothing to compare, more variants than the limit, or a combination of rungs the scenario rejects */
  | 'E_COMPARE_VARIANTS'
  /** --repeats, --confidence or --rank-by out of range, or too many runs in all */
  | 'E_COMPARE_REPEATS'
  /** a statistic asked outside its domain (a probability outside [0.5, 1), no degrees of freedom) */
  | 'E_STATISTICS_ARGUMENT';

export class ReportError extends CodedError<ReportErrorCode> {}
