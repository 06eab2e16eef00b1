// L2-regularized binary logistic regression on one shard, labels b in {0, 1}:
//   f(x) = (1/n) sum_s [log(1 + exp(z_s)) - b_s z_s] + (lambda/2) ||x||^2,  z_s = a_s . x,
// gradient (1/n) sum_s (sigma(z_s) - b_s) a_s + lambda x, Hessian
// (1/n) sum_s sigma(z_s)(1 - sigma(z_s)) a_s a_s^T + lambda I. Since sigma(1 - sigma) <= 1/4
// (equality at z = 0), L <= lambda_max(A^T A / n)/4 + lambda; the loss term is only convex, so
// mu >= lambda is all that holds for every x. The sums over samples run on the row kernels
// (vec/row-matrix.ts): row dot products, then the weighted sum of the rows in sample order.

import type { SampleScore } from './sample-score.js';
import type { Shard } from './shard.js';
import { axpy, normSquared, scale } from '../vec/kernels.js';
import { RowMatrix } from '../vec/row-matrix.js';
import { gramLargestEigenvalue } from './gram-spectrum.js';
import type { ClientObjective } from './objective.js';
import type { SymmetricOperator } from '../linalg/spectrum.js';
import { ProblemError, assertLength } from './problem-error.js';
import { checkBatch, checkRegularization, checkShard } from './shard-checks.js';

/** log(1 + e^z) without overflow: max(z, 0) + log1p(e^-|z|). */
export function softplus(z: number): number {
  return Math.max(z, 0) + Math.log1p(Math.exp(-Math.abs(z)));
}

/** 1 / (1 + e^-z), evaluated on the side where the exponential cannot overflow. */
export function sigmoid(z: number): number {
  if (z >= 0) return 1 / (1 + Math.exp(-z));
  const e = Math.exp(z);
  return e / (1 + e);
}

export class LogisticObjective implements ClientObjective {
  readonly kind = 'logistic' as const;
  readonly dim: number;
  readonly sampleCount: number;
  readonly regularization: number;
  readonly shard: Shard;
  private readonly matrix: RowMatrix;
  /** per-sample scratch: scores a_s . x, then the weights of the rows */
  private readonly scores: Float64Array;
  private readonly projections: Float64Array;
  private gramLargest: number | null = null;

  constructor(shard: Shard, regularization: number) {
    checkShard(shard);
    checkRegularization(regularization);
    for (let s = 0; s < shard.sampleCount; s++) {
      const b = shard.targets[s];
      if (b !== 0 && b !== 1) {
        throw new ProblemError(
          'E_PROBLEM_TARGET',
          `client ${shard.clientId}: logistic labels must be 0 or 1, sample ${s} has ${b}`,
        );
      }
    }
    this.matrix = new RowMatrix(
      shard.features,
      shard.sampleCount,
      shard.featureCount,
      shard.targets,
    );
    this.shard = { ...shard, features: this.matrix.values, targets: this.matrix.rowValues };
    this.scores = new Float64Array(shard.sampleCount);
    this.projections = new Float64Array(shard.sampleCount);
    this.dim = shard.featureCount;
    this.sampleCount = shard.sampleCount;
    this.regularization = regularization;
  }

  loss(x: Float64Array): number {
    assertLength('x', x, this.dim);
    const { features, targets } = this.shard;
    const p = this.dim;
    let sum = 0;
    for (let s = 0; s < this.sampleCount; s++) {
      const base = s * p;
      let z = 0;
      for (let j = 0; j < p; j++) z += features[base + j] * x[j];
      // softplus(z) - z = softplus(-z): no cancellation between two large terms when b = 1.
      sum += targets[s] === 1 ? softplus(-z) : softplus(z);
    }
    return sum / this.sampleCount + 0.5 * this.regularization * normSquared(x);
  }

  /** The predicted label is 1 where a . x > 0. */
  sampleScore(x: Float64Array): SampleScore {
    assertLength('x', x, this.dim);
    const { features, targets } = this.shard;
    const p = this.dim;
    const score: SampleScore = { lossSum: 0, correctCount: 0 };
    for (let s = 0; s < this.sampleCount; s++) {
      const base = s * p;
      let z = 0;
      for (let j = 0; j < p; j++) z += features[base + j] * x[j];
      score.lossSum += targets[s] === 1 ? softplus(-z) : softplus(z);
      if ((z > 0 ? 1 : 0) === targets[s]) score.correctCount++;
    }
    return score;
  }

  gradient(x: Float64Array, out: Float64Array): void {
    this.meanGradient(x, null, this.sampleCount, out);
  }

  minibatchGradient(x: Float64Array, sampleIndices: Uint32Array, out: Float64Array): void {
    checkBatch(sampleIndices, this.sampleCount);
    this.meanGradient(x, sampleIndices, sampleIndices.length, out);
  }

  /** Shared by the full and minibatch gradients (a sorted batch of every index is bitwise the full gradient). */
  private meanGradient(
    x: Float64Array,
    sampleIndices: Uint32Array | null,
    count: number,
    out: Float64Array,
  ): void {
    assertLength('x', x, this.dim);
    assertLength('gradient', out, this.dim);
    const { targets } = this.shard;
    // A batch may list a sample more than once, so it may be longer than the scratch.
    const weights = count <= this.sampleCount ? this.scores : new Float64Array(count);
    this.matrix.rowDots(x, 0, sampleIndices, weights);
    for (let t = 0; t < count; t++) {
      const s = sampleIndices === null ? t : sampleIndices[t];
      weights[t] = sigmoid(weights[t]) - targets[s];
    }
    out.fill(0);
    this.matrix.rowCombine(weights, sampleIndices, out, 0);
    scale(1 / count, out);
    axpy(this.regularization, x, out);
  }

  hessianVector(x: Float64Array, v: Float64Array, out: Float64Array): void {
    assertLength('x', x, this.dim);
    assertLength('v', v, this.dim);
    assertLength('out', out, this.dim);
    const weights = this.scores;
    this.matrix.rowDots(x, 0, null, weights);
    this.matrix.rowDots(v, 0, null, this.projections);
    for (let s = 0; s < this.sampleCount; s++) {
      const sig = sigmoid(weights[s]);
      weights[s] = sig * (1 - sig) * this.projections[s];
    }
    out.fill(0);
    this.matrix.rowCombine(weights, null, out, 0);
    scale(1 / this.sampleCount, out);
    axpy(this.regularization, v, out);
  }

  /** Each sample's curvature sigma(z)(1 - sigma(z)) at x, computed once. */
  hessianOperator(x: Float64Array): SymmetricOperator {
    assertLength('x', x, this.dim);
    const p = this.dim;
    const n = this.sampleCount;
    const curvature = new Float64Array(n);
    this.matrix.rowDots(x, 0, null, curvature);
    for (let s = 0; s < n; s++) {
      const sig = sigmoid(curvature[s]);
      curvature[s] = sig * (1 - sig);
    }
    return (v, out) => {
      assertLength('v', v, p);
      assertLength('out', out, p);
      out.fill(0);
      this.matrix.projectCombine(v, curvature, out);
      scale(1 / n, out);
      axpy(this.regularization, v, out);
    };
  }

  /** lambda_max(A^T A / n)/4 + lambda, attained by the Hessian at x = 0. */
  smoothnessBound(): number {
    this.gramLargest ??= gramLargestEigenvalue(this.matrix);
    return this.gramLargest / 4 + this.regularization;
  }

  strongConvexityBound(): number {
    return this.regularization;
  }
}
