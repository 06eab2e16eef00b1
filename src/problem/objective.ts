// The one interface every objective implements. A client's objective is
//   f_i(x) = (1/n_i) sum_{s in shard i} loss(x; a_s, b_s) + (lambda/2) ||x||^2,
// so that with weights p_i = n_i/n the global f = sum_i p_i f_i is the pooled empirical risk.

import type { SymmetricOperator } from '../linalg/spectrum.js';
import type { ActivationName } from './activation.js';
import type { SampleScore } from './sample-score.js';
import type { Shard } from './shard.js';

export type ProblemKind = 'least-squares' | 'logistic' | 'softmax' | 'perceptron';

export interface Objective {
  readonly kind: ProblemKind;
  /** Length of the parameter vector x (features, features x classes for softmax, every layer's weights and biases for a perceptron). */
  readonly dim: number;
  readonly sampleCount: number;
  /** The L2 coefficient lambda. */
  readonly regularization: number;
  loss(x: Float64Array): number;
  /** out <- grad f(x) over every sample. */
  gradient(x: Float64Array, out: Float64Array): void;
  /** out <- grad over the listed samples (mean over them) plus the regularizer's gradient. */
  minibatchGradient(x: Float64Array, sampleIndices: Uint32Array, out: Float64Array): void;
  /** out <- H(x) v */
  hessianVector(x: Float64Array, v: Float64Array, out: Float64Array): void;
  /**
   * v -> H(x) v with what depends on x alone (each sample's curvature weight) computed once: a
   * Newton-CG step applies one Hessian many times. Products equal hessianVector's bit for bit.
   * Optional: without it, callers use hessianVector.
   */
  hessianOperator?(x: Float64Array): SymmetricOperator;
  /**
   * Quadratics only: v -> H v through the Hessian formed as a matrix, where forming it pays
   * (formed-gram.ts); equal to hessianVector to rounding, not bit for bit, so it serves solvers
   * whose certificate is recomputed from the data. Absent or null: there is none.
   */
  formedHessian?(): SymmetricOperator | null;
  /** An upper bound on the largest Hessian eigenvalue over all x (exact for least squares). */
  smoothnessBound(): number;
  /** A lower bound on the smallest Hessian eigenvalue over all x (exact for least squares). */
  strongConvexityBound(): number;
}

/** One client's objective, over one shard. */
export interface ClientObjective extends Objective {
  /**
   * The data as the objective holds it (in kernel memory, vec/row-matrix.ts): the same bytes as
   * the shard it was built from, so that an objective built from a copy computes the same bits.
   */
  readonly shard: Shard;
  /** The model scored on this objective's samples: data loss summed, and correct labels. */
  sampleScore(x: Float64Array): SampleScore;
}

export interface ObjectiveSpec {
  kind: ProblemKind;
  regularization: number;
  /** Softmax and perceptron: number of classes; labels are integers in [0, classes). */
  classes?: number;
  /** Perceptron only: the units of each hidden layer, from the input side. */
  hiddenWidths?: readonly number[];
  /** Perceptron only: the hidden units' activation. */
  activation?: ActivationName;
}

/** v -> H(x) v through the objective's own operator where it has one. */
export function hessianOperatorOf(objective: Objective, x: Float64Array): SymmetricOperator {
  if (objective.hessianOperator) return objective.hessianOperator(x);
  const at = Float64Array.from(x);
  return (v, out) => objective.hessianVector(at, v, out);
}
