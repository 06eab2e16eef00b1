// The oracle's view of a model: suboptimality f(x) - f* and distance ||x - x*||. Testbed only;
// no method ever sees these numbers. For a nonconvex objective (a perceptron) the oracle holds a
// reference run's end instead of x* (src/theory/reference-run.ts): `suboptimality` is then the
// gap f(x) - f_ref, unclamped, negative where the model is below the reference, and `distance`
// is NaN (written as null), since a distance to a reference point says nothing.

import type { Objective } from '../problem/objective.js';
import { distanceSquared } from '../vec/kernels.js';
import type { HeldOutEvaluation } from './held-out-evaluation.js';

export interface Evaluation {
  suboptimality: number;
  distance: number;
}

/** A round's evaluation: the model's, and f - f* of the predicted trajectory (predicted-trajectory.ts) after as many rounds, null where there is none. */
export interface RoundEvaluation extends Evaluation {
  predictedSuboptimality: number | null;
  /** the model on the clients' test parts (held-out-evaluation.ts); null when none is held out */
  heldOut: HeldOutEvaluation | null;
}

export function evaluateModel(
  global: Objective,
  optimumX: Float64Array,
  optimumLoss: number,
  x: Float64Array,
): Evaluation {
  const gap = global.loss(x) - optimumLoss;
  if (global.kind === 'perceptron') return { suboptimality: gap, distance: Number.NaN };
  // f(x) - f* can come out a few ulps below zero at the optimum; clamp so that logs stay defined
  // and the record never claims a model better than the certified optimum.
  return { suboptimality: Math.max(0, gap), distance: Math.sqrt(distanceSquared(x, optimumX)) };
}
