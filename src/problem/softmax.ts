// L2-regularized multinomial logistic (softmax) regression on one shard with C classes. The
// parameter W is C x p, row-major (row c holds class c's weights), logits z = W a, and
//   f(W) = (1/n) sum_s [logsumexp(z_s) - z_{s, b_s}] + (lambda/2) ||W||^2.
// With s = softmax(z), the gradient is (1/n) sum_s (s - e_b) a^T + lambda W and the Hessian is
// (1/n) sum_s (diag(s) - s s^T) kron a a^T + lambda I. Böhning ("Multinomial logistic regression
// algorithm", Ann. Inst. Stat. Math. 44, 1992) bounds diag(s) - s s^T <= (1/2)(I - 11^T/C) <= I/2,
// hence L <= lambda_max(A^T A / n)/2 + lambda. Adding one vector to every row of W leaves every
// loss unchanged, so the loss term is flat along those directions and mu = lambda exactly.
// Gradient and Hessian-vector sums run on the row kernels (vec/row-matrix.ts), one class at a
// time: each class's sum over samples is in sample order, as in a loop over samples.

import { addLogitsScore, type SampleScore } from './sample-score.js';
import type { Shard } from './shard.js';
import { axpy, normSquared, scale } from '../vec/kernels.js';
import { RowMatrix } from '../vec/row-matrix.js';
import { gramLargestEigenvalue } from './gram-spectrum.js';
import type { ClientObjective } from './objective.js';
import type { SymmetricOperator } from '../linalg/spectrum.js';
import { ProblemError, assertLength } from './problem-error.js';
import { checkBatch, checkRegularization, checkShard } from './shard-checks.js';

/** Classes beyond this are a specification error, as in the scenario schema. */
const CLASSES_MAX = 1000;

export class SoftmaxObjective implements ClientObjective {
  readonly kind = 'softmax' as const;
  readonly dim: number;
  readonly sampleCount: number;
  readonly regularization: number;
  readonly classCount: number;
  readonly featureCount: number;
  readonly shard: Shard;
  /** Per-sample scratch (logits, then probabilities): one sample at a time. */
  private readonly logits: Float64Array;
  private readonly matrix: RowMatrix;
  /** samples x classes scratch, class-major (entry c * count + t): logits, then row weights */
  private readonly scores: Float64Array;
  /** the same for the Hessian's projections V a_s */
  private readonly projections: Float64Array;
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
    this.matrix = new RowMatrix(
      shard.features,
      shard.sampleCount,
      shard.featureCount,
      shard.targets,
    );
    this.shard = { ...shard, features: this.matrix.values, targets: this.matrix.rowValues };
    this.scores = new Float64Array(shard.sampleCount * classCount);
    this.projections = new Float64Array(shard.sampleCount * classCount);
    this.classCount = classCount;
    this.featureCount = shard.featureCount;
    this.dim = classCount * shard.featureCount;
    this.sampleCount = shard.sampleCount;
    this.regularization = regularization;
    this.logits = new Float64Array(classCount);
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

  /** For each class c: scores[c * count + t] <- w_c . a_{s_t} over the listed samples. */
  private classScores(
    w: Float64Array,
    rows: Uint32Array | null,
    count: number,
    scores: Float64Array,
  ): void {
    const p = this.featureCount;
    for (let c = 0; c < this.classCount; c++) {
      this.matrix.rowDots(w, c * p, rows, scores.subarray(c * count, (c + 1) * count));
    }
  }

  /** logits <- the t-th sample's scores (class-major, `count` samples); returns their maximum. */
  private gatherLogits(scores: Float64Array, count: number, t: number): number {
    let largest = -Infinity;
    for (let c = 0; c < this.classCount; c++) {
      const z = scores[c * count + t];
      this.logits[c] = z;
      if (z > largest) largest = z;
    }
    return largest;
  }

  /** out_c <- out_c + sum_t weights[c * count + t] a_{s_t} for every class c. */
  private combineClasses(
    weights: Float64Array,
    rows: Uint32Array | null,
    count: number,
    out: Float64Array,
  ): void {
    const p = this.featureCount;
    for (let c = 0; c < this.classCount; c++) {
      this.matrix.rowCombine(weights.subarray(c * count, (c + 1) * count), rows, out, c * p);
    }
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

  sampleScore(w: Float64Array): SampleScore {
    assertLength('W', w, this.dim);
    const n = this.sampleCount;
    const labels = this.shard.targets;
    this.classScores(w, null, n, this.scores);
    const score: SampleScore = { lossSum: 0, correctCount: 0 };
    for (let t = 0; t < n; t++)
      addLogitsScore(score, this.scores, t, n, this.classCount, labels[t]);
    return score;
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
    const { targets } = this.shard;
    const classes = this.classCount;
    // A batch may list a sample more than once, so it may be longer than the scratch.
    const scores = count <= this.sampleCount ? this.scores : new Float64Array(count * classes);
    this.classScores(w, sampleIndices, count, scores);
    for (let t = 0; t < count; t++) {
      const s = sampleIndices === null ? t : sampleIndices[t];
      this.toProbabilities(this.gatherLogits(scores, count, t));
      this.logits[targets[s]] -= 1;
      for (let c = 0; c < classes; c++) scores[c * count + t] = this.logits[c];
    }
    out.fill(0);
    this.combineClasses(scores, sampleIndices, count, out);
    scale(1 / count, out);
    axpy(this.regularization, w, out);
  }

  hessianVector(w: Float64Array, v: Float64Array, out: Float64Array): void {
    assertLength('W', w, this.dim);
    assertLength('v', v, this.dim);
    assertLength('out', out, this.dim);
    const n = this.sampleCount;
    const classes = this.classCount;
    const probabilities = this.logits;
    const u = this.projections;
    this.classScores(w, null, n, this.scores);
    // u = V a; (diag(s) - s s^T) u = s * (u - s . u), entry by entry.
    this.classScores(v, null, n, u);
    for (let s = 0; s < n; s++) {
      this.toProbabilities(this.gatherLogits(this.scores, n, s));
      let mean = 0;
      for (let c = 0; c < classes; c++) mean += probabilities[c] * u[c * n + s];
      for (let c = 0; c < classes; c++) u[c * n + s] = probabilities[c] * (u[c * n + s] - mean);
    }
    out.fill(0);
    this.combineClasses(u, null, n, out);
    scale(1 / n, out);
    axpy(this.regularization, v, out);
  }

  /** Each sample's class probabilities at W, computed once (n x C values). */
  hessianOperator(w: Float64Array): SymmetricOperator {
    assertLength('W', w, this.dim);
    const classes = this.classCount;
    const n = this.sampleCount;
    const probabilities = new Float64Array(n * classes);
    this.classScores(w, null, n, this.scores);
    for (let s = 0; s < n; s++) {
      this.toProbabilities(this.gatherLogits(this.scores, n, s));
      probabilities.set(this.logits, s * classes);
    }
    const u = new Float64Array(n * classes);
    return (v, out) => {
      assertLength('v', v, this.dim);
      assertLength('out', out, this.dim);
      this.classScores(v, null, n, u);
      for (let s = 0; s < n; s++) {
        const at = s * classes;
        let mean = 0;
        for (let c = 0; c < classes; c++) mean += probabilities[at + c] * u[c * n + s];
        for (let c = 0; c < classes; c++)
          u[c * n + s] = probabilities[at + c] * (u[c * n + s] - mean);
      }
      out.fill(0);
      this.combineClasses(u, null, n, out);
      scale(1 / n, out);
      axpy(this.regularization, v, out);
    };
  }

  /** Böhning's bound: lambda_max(A^T A / n)/2 + lambda. */
  smoothnessBound(): number {
    this.gramLargest ??= gramLargestEigenvalue(this.matrix);
    return this.gramLargest / 2 + this.regularization;
  }

  /** Exactly lambda: the loss term is flat along a common shift of every class's weights. */
  strongConvexityBound(): number {
    return this.regularization;
  }
}
