// Ridge least squares on one shard:
//   f(x) = (1/n) sum_s (1/2)(a_s . x - b_s)^2 + (lambda/2) ||x||^2,
// with gradient A^T (A x - b) / n + lambda x and the constant Hessian A^T A / n + lambda I.
// Its curvature bounds are exact: the extreme eigenvalues of that Hessian, computed once on
// first request. The gradient and Hessian-vector sums run on the row kernels (vec/row-matrix.ts),
// which hold the shard in WebAssembly memory.

import type { SampleScore } from './sample-score.js';
import type { Shard } from './shard.js';
import { axpy, normSquared, scale } from '../vec/kernels.js';
import { RowMatrix } from '../vec/row-matrix.js';
import { gramExtremeEigenvalues, rowGram, type GramExtremes } from './gram-spectrum.js';
import type { ClientObjective } from './objective.js';
import type { SymmetricOperator } from '../linalg/spectrum.js';
import { assertLength } from './problem-error.js';
import { checkBatch, checkRegularization, checkShard } from './shard-checks.js';

export class LeastSquaresObjective implements ClientObjective {
  readonly kind = 'least-squares' as const;
  readonly dim: number;
  readonly sampleCount: number;
  readonly regularization: number;
  /** the data, for solves that use its shape (the oracle's dual solve when n < p); its arrays are the kernel memory's */
  readonly shard: Shard;
  private readonly matrix: RowMatrix;
  private gram: GramExtremes | null = null;

  constructor(shard: Shard, regularization: number) {
    checkShard(shard);
    checkRegularization(regularization);
    this.matrix = new RowMatrix(
      shard.features,
      shard.sampleCount,
      shard.featureCount,
      shard.targets,
    );
    this.shard = { ...shard, features: this.matrix.values, targets: this.matrix.rowValues };
    this.dim = shard.featureCount;
    this.sampleCount = shard.sampleCount;
    this.regularization = regularization;
  }

  /**
   * Each residual -b_s + a_s1 x_1 + ... + a_sp x_p adds left to right and the squares add in row
   * order: that order is every recorded f(x)'s, so it is kept. A lone residual is one chain of
   * dependent additions, which waits on the adder's latency at every entry; four rows at once run
   * four independent chains side by side (about 3x faster on the oracle's f(x) at d = 1,000) and
   * each chain still adds in its own row's order, so the bits are the same.
   */
  loss(x: Float64Array): number {
    assertLength('x', x, this.dim);
    const { features, targets } = this.shard;
    const p = this.dim;
    const n = this.sampleCount;
    let sum = 0;
    let s = 0;
    for (; s + 4 <= n; s += 4) {
      const b0 = s * p;
      const b1 = b0 + p;
      const b2 = b1 + p;
      const b3 = b2 + p;
      let r0 = -targets[s];
      let r1 = -targets[s + 1];
      let r2 = -targets[s + 2];
      let r3 = -targets[s + 3];
      for (let j = 0; j < p; j++) {
        const xj = x[j];
        r0 += features[b0 + j] * xj;
        r1 += features[b1 + j] * xj;
        r2 += features[b2 + j] * xj;
        r3 += features[b3 + j] * xj;
      }
      sum += r0 * r0;
      sum += r1 * r1;
      sum += r2 * r2;
      sum += r3 * r3;
    }
    for (; s < n; s++) {
      const base = s * p;
      let residual = -targets[s];
      for (let j = 0; j < p; j++) residual += features[base + j] * x[j];
      sum += residual * residual;
    }
    return (0.5 * sum) / n + 0.5 * this.regularization * normSquared(x);
  }

  /** Half the squared residual per sample, as in the loss; no labels, so nothing is correct. */
  sampleScore(x: Float64Array): SampleScore {
    assertLength('x', x, this.dim);
    const { features, targets } = this.shard;
    const p = this.dim;
    let sum = 0;
    for (let s = 0; s < this.sampleCount; s++) {
      const base = s * p;
      let residual = -targets[s];
      for (let j = 0; j < p; j++) residual += features[base + j] * x[j];
      sum += residual * residual;
    }
    return { lossSum: 0.5 * sum, correctCount: 0 };
  }

  gradient(x: Float64Array, out: Float64Array): void {
    this.meanGradient(x, null, this.sampleCount, out);
  }

  minibatchGradient(x: Float64Array, sampleIndices: Uint32Array, out: Float64Array): void {
    checkBatch(sampleIndices, this.sampleCount);
    this.meanGradient(x, sampleIndices, sampleIndices.length, out);
  }

  /**
   * out <- mean over the samples (all of them when `sampleIndices` is null) plus lambda x. Full
   * and minibatch gradients share this loop, so a sorted batch of every index gives the full
   * gradient bit for bit: the kernel walks the listed rows in order and a list of every row in
   * order is the full walk.
   */
  private meanGradient(
    x: Float64Array,
    sampleIndices: Uint32Array | null,
    count: number,
    out: Float64Array,
  ): void {
    assertLength('x', x, this.dim);
    assertLength('gradient', out, this.dim);
    this.matrix.residualSum(x, sampleIndices, out);
    scale(1 / count, out);
    axpy(this.regularization, x, out);
  }

  hessianVector(x: Float64Array, v: Float64Array, out: Float64Array): void {
    assertLength('x', x, this.dim);
    assertLength('v', v, this.dim);
    assertLength('out', out, this.dim);
    out.fill(0);
    this.matrix.projectCombine(v, null, out);
    scale(1 / this.sampleCount, out);
    axpy(this.regularization, v, out);
  }

  /** The Hessian is constant: the operator is hessianVector itself. */
  hessianOperator(): SymmetricOperator {
    const origin = new Float64Array(this.dim);
    return (v, out) => this.hessianVector(origin, v, out);
  }

  /** Exact: lambda_max(A^T A / n) + lambda. */
  smoothnessBound(): number {
    return this.gramExtremes().largest + this.regularization;
  }

  /** Exact: lambda_min(A^T A / n) + lambda (just lambda when n < p). */
  strongConvexityBound(): number {
    return this.gramExtremes().smallest + this.regularization;
  }

  /** A A^T / n, n x n row-major, on the row kernels: the dual system of a solve when n < p. */
  rowGram(): Float64Array {
    return rowGram(this.matrix);
  }

  private gramExtremes(): GramExtremes {
    this.gram ??= gramExtremeEigenvalues(this.matrix);
    return this.gram;
  }
}
