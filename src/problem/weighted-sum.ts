// The global objective f = sum_i p_i f_i over the clients' objectives, behind the same interface,
// so that the oracle, the step-size rule and the evaluation of f(x) - f* need no special case.
// Loss, gradient and Hessian-vector product are the weighted sums of the clients'. The curvature
// bounds are weighted sums of the clients' bounds, except for least squares, where the interface
// promises exact values: there the Hessian is constant and its extremes are computed directly,
// on its data part formed once as a matrix where that pays (formed-gram.ts), which the oracle's
// solve then applies too (formedHessian).

import {
  largestEigenvalue,
  semidefiniteExtremeEigenvalues,
  type SymmetricOperator,
} from '../linalg/spectrum.js';
import { axpy, zero } from '../vec/kernels.js';
import { GramMatrix } from '../vec/gram-matrix.js';
import { hessianOperatorOf, type Objective, type ProblemKind } from './objective.js';
import { LeastSquaresObjective } from './least-squares.js';
import { formedGramPays } from './formed-gram.js';
import { ProblemError, assertLength } from './problem-error.js';

export class WeightedSumObjective implements Objective {
  readonly kind: ProblemKind;
  readonly dim: number;
  /** total over the clients; minibatch indices address the clients' samples in client order */
  readonly sampleCount: number;
  /** sum_i p_i lambda_i: the common lambda when every client has it and the weights sum to 1 */
  readonly regularization: number;
  readonly components: readonly Objective[];
  readonly weights: Float64Array;
  /** sampleOffsets[i] is the global index of client i's first sample */
  private readonly sampleOffsets: Uint32Array;
  private readonly scratch: Float64Array;
  private exactExtremes: { smallest: number; largest: number } | null = null;
  /** least squares: sum_i p_i A_i^T A_i / n_i once formed; null where it does not pay */
  private gram: GramMatrix | null | undefined = undefined;

  constructor(components: readonly Objective[], weights: ArrayLike<number>) {
    if (components.length === 0)
      throw new ProblemError('E_PROBLEM_WEIGHTS', 'a weighted sum needs at least one objective');
    if (weights.length !== components.length) {
      throw new ProblemError(
        'E_PROBLEM_WEIGHTS',
        `${weights.length} weights for ${components.length} objectives`,
      );
    }
    const { kind, dim } = components[0];
    let weightTotal = 0;
    let regularization = 0;
    let sampleCount = 0;
    this.sampleOffsets = new Uint32Array(components.length);
    for (let i = 0; i < components.length; i++) {
      const component = components[i];
      if (component.kind !== kind || component.dim !== dim) {
        throw new ProblemError(
          'E_PROBLEM_DIMENSION',
          `objective ${i} is ${component.kind} of dimension ${component.dim}, the first is ${kind} of dimension ${dim}`,
        );
      }
      const w = weights[i];
      if (!Number.isFinite(w) || w < 0)
        throw new ProblemError(
          'E_PROBLEM_WEIGHTS',
          `weight ${i} must be finite and >= 0, got ${w}`,
        );
      weightTotal += w;
      regularization += w * component.regularization;
      this.sampleOffsets[i] = sampleCount;
      sampleCount += component.sampleCount;
    }
    if (!(weightTotal > 0)) throw new ProblemError('E_PROBLEM_WEIGHTS', 'the weights sum to zero');
    this.kind = kind;
    this.dim = dim;
    this.sampleCount = sampleCount;
    this.regularization = regularization;
    this.components = components;
    this.weights = Float64Array.from(weights);
    this.scratch = new Float64Array(dim);
  }

  loss(x: Float64Array): number {
    let sum = 0;
    for (let i = 0; i < this.components.length; i++) {
      if (this.weights[i] !== 0) sum += this.weights[i] * this.components[i].loss(x);
    }
    return sum;
  }

  gradient(x: Float64Array, out: Float64Array): void {
    assertLength('gradient', out, this.dim);
    zero(out);
    for (let i = 0; i < this.components.length; i++) {
      if (this.weights[i] === 0) continue;
      this.components[i].gradient(x, this.scratch);
      axpy(this.weights[i], this.scratch, out);
    }
  }

  /**
   * An unbiased estimate of grad f from a batch B drawn uniformly from all N samples: sample s of
   * client i carries weight p_i / n_i, and the sum over B is scaled by N / |B| (Horvitz and
   * Thompson, JASA 47, 1952, with inclusion probability |B|/N). With p_i = n_i / n this is the
   * plain batch mean; with B = every sample it is the full gradient.
   */
  minibatchGradient(x: Float64Array, sampleIndices: Uint32Array, out: Float64Array): void {
    assertLength('gradient', out, this.dim);
    if (sampleIndices.length === 0)
      throw new ProblemError('E_PROBLEM_BATCH', 'a minibatch needs at least one sample');
    const m = this.components.length;
    const perClient = new Uint32Array(m);
    const owner = new Uint32Array(sampleIndices.length);
    for (let t = 0; t < sampleIndices.length; t++) {
      const s = sampleIndices[t];
      if (s >= this.sampleCount) {
        throw new ProblemError(
          'E_PROBLEM_BATCH',
          `minibatch index ${s} is outside the ${this.sampleCount} samples`,
        );
      }
      const i = this.ownerOf(s);
      owner[t] = i;
      perClient[i]++;
    }
    const local: Uint32Array[] = [];
    for (let i = 0; i < m; i++) local.push(new Uint32Array(perClient[i]));
    const filled = new Uint32Array(m);
    for (let t = 0; t < sampleIndices.length; t++) {
      const i = owner[t];
      local[i][filled[i]++] = sampleIndices[t] - this.sampleOffsets[i];
    }
    zero(out);
    const inverseInclusion = this.sampleCount / sampleIndices.length;
    for (let i = 0; i < m; i++) {
      const p = this.weights[i];
      const component = this.components[i];
      // A client's minibatch gradient is (its batch mean) + lambda_i x; its batch contributes
      // c_i times the mean, while the regularizer keeps its full weight p_i.
      const c =
        perClient[i] === 0 ? 0 : p * (perClient[i] / component.sampleCount) * inverseInclusion;
      if (c !== 0) {
        component.minibatchGradient(x, local[i], this.scratch);
        axpy(c, this.scratch, out);
      }
      axpy((p - c) * component.regularization, x, out);
    }
  }

  /** Index of the client that owns global sample s (binary search over the offsets). */
  private ownerOf(s: number): number {
    let lo = 0;
    let hi = this.sampleOffsets.length - 1;
    while (lo < hi) {
      const mid = (lo + hi + 1) >>> 1;
      if (this.sampleOffsets[mid] <= s) lo = mid;
      else hi = mid - 1;
    }
    return lo;
  }

  hessianVector(x: Float64Array, v: Float64Array, out: Float64Array): void {
    assertLength('out', out, this.dim);
    zero(out);
    for (let i = 0; i < this.components.length; i++) {
      if (this.weights[i] === 0) continue;
      this.components[i].hessianVector(x, v, this.scratch);
      axpy(this.weights[i], this.scratch, out);
    }
  }

  /** The weighted sum of the components' operators at x (each computes its curvature once). */
  hessianOperator(x: Float64Array): SymmetricOperator {
    const parts: { weight: number; apply: SymmetricOperator }[] = [];
    for (let i = 0; i < this.components.length; i++) {
      if (this.weights[i] !== 0)
        parts.push({ weight: this.weights[i], apply: hessianOperatorOf(this.components[i], x) });
    }
    const scratch = new Float64Array(this.dim);
    return (v, out) => {
      assertLength('out', out, this.dim);
      zero(out);
      for (const part of parts) {
        part.apply(v, scratch);
        axpy(part.weight, scratch, out);
      }
    };
  }

  /**
   * Least squares where forming pays: v -> H v through the formed data part plus lambda v, equal
   * to hessianVector to rounding (not bit for bit). Null otherwise.
   */
  formedHessian(): SymmetricOperator | null {
    const gram = this.formedGram();
    if (gram === null) return null;
    const lambda = this.regularization;
    return (v, out) => {
      gram.multiply(v, out);
      axpy(lambda, v, out);
    };
  }

  /** The data part sum_i p_i A_i^T A_i / n_i, formed on first request where it pays. */
  private formedGram(): GramMatrix | null {
    if (this.gram !== undefined) return this.gram;
    const shards: LeastSquaresObjective[] = [];
    for (const component of this.components) {
      if (component instanceof LeastSquaresObjective) shards.push(component);
    }
    const pays =
      this.kind === 'least-squares' &&
      shards.length === this.components.length &&
      formedGramPays(this.sampleCount, this.dim);
    this.gram = pays
      ? new GramMatrix(
          this.dim,
          shards.flatMap((client, i) =>
            this.weights[i] === 0
              ? []
              : [
                  {
                    values: client.shard.features,
                    rowCount: client.sampleCount,
                    weight: this.weights[i] / client.sampleCount,
                  },
                ],
          ),
        )
      : null;
    return this.gram;
  }

  smoothnessBound(): number {
    if (this.kind === 'least-squares') return this.leastSquaresExtremes().largest;
    let sum = 0;
    for (let i = 0; i < this.components.length; i++)
      sum += this.weights[i] * this.components[i].smoothnessBound();
    return sum;
  }

  strongConvexityBound(): number {
    if (this.kind === 'least-squares') return this.leastSquaresExtremes().smallest;
    let sum = 0;
    for (let i = 0; i < this.components.length; i++)
      sum += this.weights[i] * this.components[i].strongConvexityBound();
    return sum;
  }

  /**
   * Extremes of the constant Hessian sum_i p_i (A_i^T A_i / n_i) + lambda I: those of the data
   * part (semidefinite, so a rank-deficient one reports exactly 0), shifted by lambda. The data
   * part has rank at most the total sample count; below the dimension its smallest eigenvalue is
   * exactly 0 and Lanczos only has to find the largest. Lanczos runs on the formed data part
   * where there is one, else through the data.
   */
  private leastSquaresExtremes(): { smallest: number; largest: number } {
    if (this.exactExtremes === null) {
      const origin = new Float64Array(this.dim);
      const lambda = this.regularization;
      const gram = this.formedGram();
      const dataPart: SymmetricOperator = gram
        ? (v, out) => gram.multiply(v, out)
        : (v, out) => {
            this.hessianVector(origin, v, out);
            axpy(-lambda, v, out);
          };
      const data =
        this.sampleCount < this.dim
          ? { smallest: 0, largest: largestEigenvalue(dataPart, this.dim).largest }
          : semidefiniteExtremeEigenvalues(dataPart, this.dim);
      this.exactExtremes = { smallest: data.smallest + lambda, largest: data.largest + lambda };
    }
    return this.exactExtremes;
  }
}
