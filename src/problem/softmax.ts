// L2-regularized multinomial logistic (softmax) regression on one shard with C classes. The
// parameter W is C x p, row-major (row c holds class c's weights), logits z = W a, and
//   f(W) = (1/n) sum_s [logsumexp(z_s) - z_{s, b_s}] + (lambda/2) ||W||^2.
// With s = softmax(z), the gradient is (1/n) sum_s (s - e_b) a^T + lambda W and the Hessian is
// (1/n) sum_s (diag(s) - s s^T) kron a a^T + lambda I. Böhning ("Multinomial logistic regression
// algorithm", Ann. Inst. Stat. Math. 44, 1992) bounds diag(s) - s s^T <= (1/2)(I - 11^T/C) <= I/2,
// hence L <= lambda_max(A^T A / n)/2 + lambda. Adding one vector to every row of W leaves every
// loss unchanged, so the loss term is flat along those directions and mu = lambda exactly.

import type { Shard } from './shard.js';
import { axpy, normSquared, scale } from '../vec/kernels.js';
import { gramLargestEigenvalue } from './gram-spectrum.js';
import type { Objective } from './objective.js';
import type { SymmetricOperator } from '../linalg/spectrum.js';
import { ProblemError, assertLength } from './problem-error.js';
import { checkBatch, checkRegularization, checkShard } from './shard-checks.js';

/** Classes beyond this are a specification error, as in the scenario schema. */
const CLASSES_MAX = 1000;

export class SoftmaxObjective implements Objective {
  readonly kind = 'softmax' as const;
  readonly dim: number;
  readonly sampleCount: number;
  readonly regularization: number;
  readonly classCount: number;
  readonly featureCount: number;
  private readonly shard: Shard;
  /** Per-sample scratch (logits, then probabilities; curvature products): one sample at a time. */
  private readonly logits: Float64Array;
  private readonly directional: Float64Array;
  private gramLargest: number | null = null;

  constructor(shard: Shard, regularization: number, classCount: number) {
    checkShard(shard);
    checkRegularization(regularization);
    if (!Number.isInteger(classCount) || classCount < 2 || classCount > CLASSES_MAX) {
      throw new ProblemError(
        'E_PROBLEM_SPEC',
        `softmax needs an integer class count in [2, ${CLASSES_MAX}], got ${classCount}`,
      );
    }
    for (let s = 0; s < shard.sampleCount; s++) {
      const b = shard.targets[s];
      if (!Number.isInteger(b) || b < 0 || b >= classCount) {
        throw new ProblemError(
          'E_PROBLEM_TARGET',
          `client ${shard.clientId}: softmax labels must be class indices in [0, ${classCount}), sample ${s} has ${b}`,
        );
      }
    }
    this.shard = shard;
    this.classCount = classCount;
    this.featureCount = shard.featureCount;
    this.dim = classCount * shard.featureCount;
    this.sampleCount = shard.sampleCount;
    this.regularization = regularization;
    this.logits = new Float64Array(classCount);
    this.directional = new Float64Array(classCount);
  }

  /** logits <- W a_s; returns their maximum. */
  private computeLogits(w: Float64Array, s: number): number {
    const { features } = this.shard;
    const p = this.featureCount;
    const base = s * p;
    let largest = -Infinity;
    for (let c = 0; c < this.classCount; c++) {
      const row = c * p;
      let z = 0;
      for (let j = 0; j < p; j++) z += w[row + j] * features[base + j];
      this.logits[c] = z;
      if (z > largest) largest = z;
    }
    return largest;
  }

  /**
   * logits <- softmax(logits), shifted by their maximum so that no exponential overflows and the
   * largest term is exactly 1; returns log sum exp(z - max).
   */
  private toProbabilities(largest: number): number {
    let total = 0;
    for (let c = 0; c < this.classCount; c++) {
      const e = Math.exp(this.logits[c] - largest);
      this.logits[c] = e;
      total += e;
    }
    for (let c = 0; c < this.classCount; c++) this.logits[c] /= total;
    return Math.log(total);
  }

  loss(w: Float64Array): number {
    assertLength('W', w, this.dim);
    const { targets } = this.shard;
    let sum = 0;
    for (let s = 0; s < this.sampleCount; s++) {
      const largest = this.computeLogits(w, s);
      const labelLogit = this.logits[targets[s]];
      let total = 0;
      for (let c = 0; c < this.classCount; c++) total += Math.exp(this.logits[c] - largest);
      // logsumexp(z) - z_b = (max - z_b) + log sum exp(z - max): both parts are >= 0.
      sum += largest - labelLogit + Math.log(total);
    }
    return sum / this.sampleCount + 0.5 * this.regularization * normSquared(w);
  }

  gradient(w: Float64Array, out: Float64Array): void {
    this.meanGradient(w, null, this.sampleCount, out);
  }

  minibatchGradient(w: Float64Array, sampleIndices: Uint32Array, out: Float64Array): void {
    checkBatch(sampleIndices, this.sampleCount);
    this.meanGradient(w, sampleIndices, sampleIndices.length, out);
  }

  /** Shared by the full and minibatch gradients (a sorted batch of every index is bitwise the full gradient). */
  private meanGradient(
    w: Float64Array,
    sampleIndices: Uint32Array | null,
    count: number,
    out: Float64Array,
  ): void {
    assertLength('W', w, this.dim);
    assertLength('gradient', out, this.dim);
    const { features, targets } = this.shard;
    const p = this.featureCount;
    out.fill(0);
    for (let t = 0; t < count; t++) {
      const s = sampleIndices === null ? t : sampleIndices[t];
      this.toProbabilities(this.computeLogits(w, s));
      this.logits[targets[s]] -= 1;
      const base = s * p;
      for (let c = 0; c < this.classCount; c++) {
        const weight = this.logits[c];
        const row = c * p;
        for (let j = 0; j < p; j++) out[row + j] += weight * features[base + j];
      }
    }
    scale(1 / count, out);
    axpy(this.regularization, w, out);
  }

  hessianVector(w: Float64Array, v: Float64Array, out: Float64Array): void {
    assertLength('W', w, this.dim);
    assertLength('v', v, this.dim);
    assertLength('out', out, this.dim);
    const { features } = this.shard;
    const p = this.featureCount;
    const probabilities = this.logits;
    const u = this.directional;
    out.fill(0);
    for (let s = 0; s < this.sampleCount; s++) {
      this.toProbabilities(this.computeLogits(w, s));
      const base = s * p;
      // u = V a; (diag(s) - s s^T) u = s * (u - s . u), entry by entry.
      let mean = 0;
      for (let c = 0; c < this.classCount; c++) {
        const row = c * p;
        let projection = 0;
        for (let j = 0; j < p; j++) projection += v[row + j] * features[base + j];
        u[c] = projection;
        mean += probabilities[c] * projection;
      }
      for (let c = 0; c < this.classCount; c++) {
        const weight = probabilities[c] * (u[c] - mean);
        const row = c * p;
        for (let j = 0; j < p; j++) out[row + j] += weight * features[base + j];
      }
    }
    scale(1 / this.sampleCount, out);
    axpy(this.regularization, v, out);
  }

  /** Each sample's class probabilities at W, computed once (n x C values). */
  hessianOperator(w: Float64Array): SymmetricOperator {
    assertLength('W', w, this.dim);
    const { features } = this.shard;
    const p = this.featureCount;
    const classes = this.classCount;
    const n = this.sampleCount;
    const probabilities = new Float64Array(n * classes);
    for (let s = 0; s < n; s++) {
      this.toProbabilities(this.computeLogits(w, s));
      probabilities.set(this.logits, s * classes);
    }
    const u = new Float64Array(classes);
    return (v, out) => {
      assertLength('v', v, this.dim);
      assertLength('out', out, this.dim);
      out.fill(0);
      for (let s = 0; s < n; s++) {
        const base = s * p;
        const at = s * classes;
        let mean = 0;
        for (let c = 0; c < classes; c++) {
          const row = c * p;
          let projection = 0;
          for (let j = 0; j < p; j++) projection += v[row + j] * features[base + j];
          u[c] = projection;
          mean += probabilities[at + c] * projection;
        }
        for (let c = 0; c < classes; c++) {
          const weight = probabilities[at + c] * (u[c] - mean);
          const row = c * p;
          for (let j = 0; j < p; j++) out[row + j] += weight * features[base + j];
        }
      }
      scale(1 / n, out);
      axpy(this.regularization, v, out);
    };
  }

  /** Böhning's bound: lambda_max(A^T A / n)/2 + lambda. */
  smoothnessBound(): number {
    this.gramLargest ??= gramLargestEigenvalue(this.shard);
    return this.gramLargest / 2 + this.regularization;
  }

  /** Exactly lambda: the loss term is flat along a common shift of every class's weights. */
  strongConvexityBound(): number {
    return this.regularization;
  }
}
