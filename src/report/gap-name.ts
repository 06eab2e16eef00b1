// What a run's gap is called. A convex objective's runs are measured against its optimum,
// f(x) - f*; a nonconvex one (a perceptron) has no x*, and its runs are measured against the loss
// a reference run reached, f(x) - f_ref, which is not an optimum (README, "A nonconvex model").

import type { ProblemKind } from '../problem/objective.js';

/** True where the gap is to a reference run's loss rather than to f*. */
export function gapIsToReference(kind: ProblemKind): boolean {
  return kind === 'perceptron';
}

/** "f - f*" or "f - f_ref"; `compact` drops the spaces (the progress line). */
export function gapName(toReference: boolean, compact = false): string {
  const name = toReference ? 'f - f_ref' : 'f - f*';
  return compact ? name.replaceAll(' ', '') : name;
}
