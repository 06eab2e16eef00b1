// The local solver that FedAvg, FedNova, gd, SCAFFOLD and FedLin share: gradient steps from
// the server model, optionally shifted by a constant drift correction. One code path keeps
// gd, FedAvg and FedNova bit-identical where their definitions coincide.

import type { Objective } from '../problem/objective.js';
import type { MinibatchSampler } from '../problem/minibatch-sampler.js';

/** out <- the gradient used by one local step: full, or over the sampler's next minibatch. */
export function stepGradient(
  objective: Objective,
  sampler: MinibatchSampler | null,
  y: Float64Array,
  out: Float64Array,
): void {
  if (sampler === null) objective.gradient(y, out);
  else objective.minibatchGradient(y, sampler.next(), out);
}

/**
 * `steps` times: y <- y - stepSize (grad f_i(y) + correction); correction null means none.
 * `gradient` is a work buffer of y's length.
 */
export function descend(
  objective: Objective,
  sampler: MinibatchSampler | null,
  y: Float64Array,
  steps: number,
  stepSize: number,
  correction: Float64Array | null,
  gradient: Float64Array,
): void {
  const d = y.length;
  for (let step = 0; step < steps; step++) {
    stepGradient(objective, sampler, y, gradient);
    if (correction === null) {
      for (let j = 0; j < d; j++) y[j] -= stepSize * gradient[j];
    } else {
      for (let j = 0; j < d; j++) y[j] -= stepSize * (gradient[j] + correction[j]);
    }
  }
}

/** y - x as a fresh array: the upload must not alias a buffer the client reuses. */
export function freshDifference(y: Float64Array, x: Float64Array): Float64Array {
  const out = new Float64Array(y.length);
  for (let j = 0; j < y.length; j++) out[j] = y[j] - x[j];
  return out;
}
