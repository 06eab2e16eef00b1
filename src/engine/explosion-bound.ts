// When a finite value already counts as diverged. A run whose values overflow is caught by
// finiteness alone, but a finite value can be as ruinous: one upload of 1e300 keeps the model
// finite while f - f* is infinite for every round after. So the round walk also stops a run as
// "diverged" once a model or an upload is past EXPLOSION_FACTOR times the run's initial scale,
// or f - f* is past EXPLOSION_FACTOR times its initial value:
//
//   ||x_t|| or ||u|| > EXPLOSION_FACTOR * max(1, ||x_0||, ||x_0 - x*||)
//   f(x_t) - f*      > EXPLOSION_FACTOR * max(1, f(x_0) - f*)
//
// max(1, ...) keeps the bound meaningful when the run starts at or near x* (x_0 = x* gives
// f(x_0) - f* = 0), and ||x_0 - x*|| stands in for the scale of x*, which the walk does not see
// (||x*|| <= ||x_0|| + ||x_0 - x*||). A nonconvex objective has no x* (its distance is NaN):
// ||x_0|| alone is the scale there.

import type { Evaluation } from './evaluate.js';

/**
 * Twelve orders of magnitude past the start: no convergent method's transient growth comes near
 * it, and its square (f - f* grows as the square of the distance) stays far inside float64's
 * range of about 1e308, so the run is stopped while its numbers still mean something. Common
 * practice: training loops stop on a loss that is NaN or has grown by many orders of magnitude.
 */
export const EXPLOSION_FACTOR = 1e12;

export interface ExplosionBound {
  /** largest Euclidean norm a model, or any vector of an upload, may have */
  normMax: number;
  /** largest f - f* a model may have */
  suboptimalityMax: number;
}

/** The bound of a run that starts at `initialModel`, evaluated as `initial`. */
export function explosionBound(initialModel: Float64Array, initial: Evaluation): ExplosionBound {
  return {
    normMax:
      EXPLOSION_FACTOR *
      Math.max(
        1,
        euclideanNorm(initialModel),
        Number.isNaN(initial.distance) ? 0 : initial.distance,
      ),
    suboptimalityMax: EXPLOSION_FACTOR * Math.max(1, initial.suboptimality),
  };
}

/** ||v||, scaled by its largest entry so that no square overflows; NaN if an entry is NaN. */
function euclideanNorm(values: ArrayLike<number>): number {
  let largest = 0;
  for (let i = 0; i < values.length; i++) {
    const a = Math.abs(values[i]);
    if (Number.isNaN(a)) return Number.NaN;
    if (a > largest) largest = a;
  }
  if (largest === 0 || !Number.isFinite(largest)) return largest;
  let sum = 0;
  for (let i = 0; i < values.length; i++) {
    const scaled = values[i] / largest;
    sum += scaled * scaled;
  }
  return largest * Math.sqrt(sum);
}

/** True when every entry is finite and ||values|| is within the bound. */
export function normWithin(values: ArrayLike<number>, bound: ExplosionBound): boolean {
  return euclideanNorm(values) <= bound.normMax;
}

/** True when f - f* is finite and within the bound. */
export function suboptimalityWithin(suboptimality: number, bound: ExplosionBound): boolean {
  return suboptimality <= bound.suboptimalityMax;
}
