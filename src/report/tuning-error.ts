// Problems with a comparison's tuning: the options or the scenario's tuning section, and a field
// the variants cannot take. The CLI maps every code to exit code 2.

import { CodedError } from '../base/coded-error.js';

export type TuningErrorCode =
  /** --tune, --tune-search, --tune-budget, --tune-by or the tuning section: grammar, ranges, figure, budget */
  | 'E_TUNE_OPTION'
  /** the tuned field is not one a variant can take at the candidate values, or a ladder moves it */
  | 'E_TUNE_FIELD';

export class TuningError extends CodedError<TuningErrorCode> {}
