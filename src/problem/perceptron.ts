// A multilayer perceptron classifier on one shard: one or two hidden layers of a smooth
// activation (activation.ts), a softmax cross-entropy output over C classes, and the L2 term on
// every parameter, so that with z_L(x; a) the output logits
//   f(x) = (1/n) sum_s [logsumexp(z_L(x; a_s)) - z_L(x; a_s)_{b_s}] + (lambda/2) ||x||^2.
// The parameters are flattened as perceptron-layout.ts documents.
//
// The gradient is backpropagation; the Hessian-vector product is the R-operator (Pearlmutter,
// "Fast exact multiplication by the Hessian", Neural Computation 6(1), 1994): a forward and a
// backward pass of the directional derivatives R{.} = d/dr (.)(x + r v) at r = 0, exact to
// rounding and about twice a gradient's cost, with no difference quotient anywhere.
//
// The objective is nonconvex (hidden units can be permuted; the Hessian is indefinite in
// general), so no curvature bound holds over all x: smoothnessBound is Infinity and
// strongConvexityBound is -Infinity, and nothing that needs L, mu or x* applies to it.
//
// Every per-sample quantity is kept unit-major (entry o * count + t for unit o and sample t), so
// that the first layer runs on the row kernels (vec/row-matrix.ts), one hidden unit at a time,
// and the small later layers are plain loops over samples. Each sum is taken in one fixed order
// (samples ascending, then units ascending), so results are the same bits in every process.

import { addLogitsScore, type SampleScore } from './sample-score.js';
import type { Shard } from './shard.js';
import { axpy, normSquared, scale } from '../vec/kernels.js';
import { RowMatrix } from '../vec/row-matrix.js';
import { activationByName, type Activation, type ActivationName } from './activation.js';
import type { ClientObjective } from './objective.js';
import { perceptronLayout, type LayerSpan } from './perceptron-layout.js';
import { ProblemError, assertLength } from './problem-error.js';
import { checkBatch, checkRegularization, checkShard } from './shard-checks.js';

/** Classes beyond this are a specification error, as for softmax. */
const CLASSES_MAX = 1000;
/**
 * Float64 values a perceptron keeps per sample and unit for the full shard (a Workspace with its
 * R pass): z, h, sigma'(z), delta and the back signal, then R{z}, R{h}, R{delta} and R{back}.
 * The memory estimate (src/engine/memory-estimate.ts) counts them.
 */
export const PERCEPTRON_VALUES_PER_UNIT = 9;
/** Batch sizes whose scratch is kept between calls: the full shard and one minibatch size. */
const WORKSPACES_KEPT = 2;

export interface PerceptronShape {
  hiddenWidths: readonly number[];
  activation: ActivationName;
  classCount: number;
}

/** Per-batch scratch; every array is unit-major over `count` samples. */
interface Workspace {
  count: number;
  /** per layer: pre-activations z_l */
  pre: Float64Array[];
  /** per hidden layer: h_l = sigma(z_l) */
  hidden: Float64Array[];
  /** per hidden layer: sigma'(z_l) */
  slope: Float64Array[];
  /** per layer: delta_l = d loss / d z_l */
  delta: Float64Array[];
  /** per hidden layer: W_{l+1}^T delta_{l+1}, the signal before the slope */
  back: Float64Array[];
  /** output probabilities softmax(z_L) */
  probabilities: Float64Array;
  /** the R pass's counterparts, made on the first Hessian-vector product */
  r: {
    pre: Float64Array[];
    hidden: Float64Array[];
    delta: Float64Array[];
    back: Float64Array;
  } | null;
}

export class PerceptronObjective implements ClientObjective {
  readonly kind = 'perceptron' as const;
  readonly dim: number;
  readonly sampleCount: number;
  readonly regularization: number;
  readonly classCount: number;
  readonly featureCount: number;
  readonly layers: readonly LayerSpan[];
  readonly activation: Activation;
  private readonly matrix: RowMatrix;
  /** the data as this objective holds it (in kernel memory): the same bytes as its shard */
  readonly shard: Shard;
  private readonly workspaces = new Map<number, Workspace>();

  constructor(shard: Shard, regularization: number, shape: PerceptronShape) {
    checkShard(shard);
    checkRegularization(regularization);
    const { classCount } = shape;
    if (!Number.isInteger(classCount) || classCount < 2 || classCount > CLASSES_MAX) {
      throw new ProblemError(
        'E_PROBLEM_SPEC',
        `a perceptron needs an integer class count in [2, ${CLASSES_MAX}], got ${classCount}`,
      );
    }
    for (let s = 0; s < shard.sampleCount; s++) {
      const b = shard.targets[s];
      if (!Number.isInteger(b) || b < 0 || b >= classCount) {
        throw new ProblemError(
          'E_PROBLEM_TARGET',
          `client ${shard.clientId}: perceptron labels must be class indices in [0, ${classCount}), sample ${s} has ${b}`,
        );
      }
    }
    this.layers = perceptronLayout(shard.featureCount, shape.hiddenWidths, classCount);
    const last = this.layers[this.layers.length - 1];
    this.dim = last.biasAt + last.outputs;
    this.activation = activationByName(shape.activation);
    this.matrix = new RowMatrix(
      shard.features,
      shard.sampleCount,
      shard.featureCount,
      shard.targets,
    );
    this.shard = { ...shard, features: this.matrix.values, targets: this.matrix.rowValues };
    this.classCount = classCount;
    this.featureCount = shard.featureCount;
    this.sampleCount = shard.sampleCount;
    this.regularization = regularization;
  }

  loss(x: Float64Array): number {
    assertLength('x', x, this.dim);
    const ws = this.workspace(this.sampleCount);
    this.forward(x, null, ws);
    const logits = ws.pre[this.layers.length - 1];
    const n = this.sampleCount;
    const labels = this.matrix.rowValues;
    let sum = 0;
    for (let t = 0; t < n; t++) {
      let largest = -Infinity;
      for (let c = 0; c < this.classCount; c++) largest = Math.max(largest, logits[c * n + t]);
      let total = 0;
      for (let c = 0; c < this.classCount; c++) total += Math.exp(logits[c * n + t] - largest);
      // logsumexp(z) - z_b = (max - z_b) + log sum exp(z - max): both parts are >= 0.
      sum += largest - logits[labels[t] * n + t] + Math.log(total);
    }
    return sum / n + 0.5 * this.regularization * normSquared(x);
  }

  sampleScore(x: Float64Array): SampleScore {
    assertLength('x', x, this.dim);
    const n = this.sampleCount;
    const ws = this.workspace(n);
    this.forward(x, null, ws);
    const logits = ws.pre[this.layers.length - 1];
    const labels = this.matrix.rowValues;
    const score: SampleScore = { lossSum: 0, correctCount: 0 };
    for (let t = 0; t < n; t++) addLogitsScore(score, logits, t, n, this.classCount, labels[t]);
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
    rows: Uint32Array | null,
    count: number,
    out: Float64Array,
  ): void {
    assertLength('x', x, this.dim);
    assertLength('gradient', out, this.dim);
    const ws = this.workspace(count);
    this.forward(x, rows, ws);
    this.outputDelta(rows, ws);
    this.backPropagate(x, ws);
    out.fill(0);
    this.accumulateGradient(ws, ws.delta, null, rows, out);
    scale(1 / count, out);
    axpy(this.regularization, x, out);
  }

  hessianVector(x: Float64Array, v: Float64Array, out: Float64Array): void {
    assertLength('x', x, this.dim);
    assertLength('v', v, this.dim);
    assertLength('out', out, this.dim);
    const n = this.sampleCount;
    const ws = this.workspace(n);
    this.forward(x, null, ws);
    this.outputDelta(null, ws);
    this.backPropagate(x, ws);
    const r = this.rScratch(ws);
    this.rForward(x, v, ws);
    this.rOutputDelta(ws);
    this.rBackPropagate(x, v, ws);
    out.fill(0);
    this.accumulateGradient(ws, r.delta, r.hidden, null, out);
    scale(1 / n, out);
    axpy(this.regularization, v, out);
  }

  /** No bound holds over all x for a perceptron (module comment). */
  smoothnessBound(): number {
    return Infinity;
  }

  /** The Hessian is indefinite in general: no lower bound over all x. */
  strongConvexityBound(): number {
    return -Infinity;
  }

  /** z_l and h_l of every layer for the listed samples (every sample when null). */
  private forward(x: Float64Array, rows: Uint32Array | null, ws: Workspace): void {
    const count = ws.count;
    const last = this.layers.length - 1;
    for (let l = 0; l <= last; l++) {
      const span = this.layers[l];
      const z = ws.pre[l];
      if (l === 0) this.firstLayerProducts(x, span, rows, count, z);
      else {
        z.fill(0);
        multiplyAdd(x, span, ws.hidden[l - 1], count, z);
      }
      addBias(x, span, count, z);
      if (l < last) {
        const h = ws.hidden[l];
        const slope = ws.slope[l];
        for (let k = 0; k < z.length; k++) {
          h[k] = this.activation.value(z[k]);
          slope[k] = this.activation.slope(z[k]);
        }
      }
    }
  }

  /** z[o * count + t] <- (row o of W_0) . a_{rows_t}, on the row kernels. */
  private firstLayerProducts(
    x: Float64Array,
    span: LayerSpan,
    rows: Uint32Array | null,
    count: number,
    z: Float64Array,
  ): void {
    for (let o = 0; o < span.outputs; o++) {
      this.matrix.rowDots(
        x,
        span.weightAt + o * span.inputs,
        rows,
        z.subarray(o * count, (o + 1) * count),
      );
    }
  }

  /** probabilities <- softmax(z_L); delta_L <- probabilities - e_b, per sample. */
  private outputDelta(rows: Uint32Array | null, ws: Workspace): void {
    const count = ws.count;
    const classes = this.classCount;
    const logits = ws.pre[this.layers.length - 1];
    const p = ws.probabilities;
    const delta = ws.delta[this.layers.length - 1];
    const labels = this.matrix.rowValues;
    for (let t = 0; t < count; t++) {
      let largest = -Infinity;
      for (let c = 0; c < classes; c++) largest = Math.max(largest, logits[c * count + t]);
      let total = 0;
      for (let c = 0; c < classes; c++) {
        const e = Math.exp(logits[c * count + t] - largest);
        p[c * count + t] = e;
        total += e;
      }
      for (let c = 0; c < classes; c++) {
        p[c * count + t] /= total;
        delta[c * count + t] = p[c * count + t];
      }
      delta[labels[rows === null ? t : rows[t]] * count + t] -= 1;
    }
  }

  /** delta_l <- sigma'(z_l) (W_{l+1}^T delta_{l+1}) from the output down to the first layer. */
  private backPropagate(x: Float64Array, ws: Workspace): void {
    for (let l = this.layers.length - 1; l > 0; l--) {
      const back = ws.back[l - 1];
      back.fill(0);
      transposeMultiplyAdd(x, this.layers[l], ws.delta[l], ws.count, back);
      const slope = ws.slope[l - 1];
      const delta = ws.delta[l - 1];
      for (let k = 0; k < back.length; k++) delta[k] = slope[k] * back[k];
    }
  }

  /**
   * out <- out + sum over samples of each layer's delta_l in_l^T (weights) and delta_l (biases),
   * in_0 = a and in_l = h_{l-1}; with `rInputs`, also + delta'_l R{in_l}^T where delta' is
   * ws.delta (the R-operator's product rule; R{a} = 0 on the first layer). `deltas` is ws.delta
   * for a gradient and R{delta} for a Hessian-vector product.
   */
  private accumulateGradient(
    ws: Workspace,
    deltas: Float64Array[],
    rInputs: Float64Array[] | null,
    rows: Uint32Array | null,
    out: Float64Array,
  ): void {
    const count = ws.count;
    for (let l = 0; l < this.layers.length; l++) {
      const span = this.layers[l];
      const delta = deltas[l];
      if (l === 0) {
        for (let o = 0; o < span.outputs; o++) {
          this.matrix.rowCombine(
            delta.subarray(o * count, (o + 1) * count),
            rows,
            out,
            span.weightAt + o * span.inputs,
          );
        }
      } else {
        outerAdd(delta, ws.hidden[l - 1], span, count, out);
        if (rInputs !== null) outerAdd(ws.delta[l], rInputs[l - 1], span, count, out);
      }
      for (let o = 0; o < span.outputs; o++) {
        let sum = 0;
        for (let t = 0; t < count; t++) sum += delta[o * count + t];
        out[span.biasAt + o] += sum;
      }
    }
  }

  /** R{z_l} = V_l in_l + W_l R{in_l} + c_l and R{h_l} = sigma'(z_l) R{z_l}, layer by layer. */
  private rForward(x: Float64Array, v: Float64Array, ws: Workspace): void {
    const r = this.rScratch(ws);
    const count = ws.count;
    const last = this.layers.length - 1;
    for (let l = 0; l <= last; l++) {
      const span = this.layers[l];
      const rz = r.pre[l];
      if (l === 0) this.firstLayerProducts(v, span, null, count, rz);
      else {
        rz.fill(0);
        multiplyAdd(v, span, ws.hidden[l - 1], count, rz);
        multiplyAdd(x, span, r.hidden[l - 1], count, rz);
      }
      addBias(v, span, count, rz);
      if (l < last) {
        const slope = ws.slope[l];
        const rh = r.hidden[l];
        for (let k = 0; k < rz.length; k++) rh[k] = slope[k] * rz[k];
      }
    }
  }

  /** R{delta_L} = R{softmax(z_L)} = p * (R{z_L} - p . R{z_L}), per sample. */
  private rOutputDelta(ws: Workspace): void {
    const r = this.rScratch(ws);
    const count = ws.count;
    const classes = this.classCount;
    const last = this.layers.length - 1;
    const rz = r.pre[last];
    const rDelta = r.delta[last];
    const p = ws.probabilities;
    for (let t = 0; t < count; t++) {
      let mean = 0;
      for (let c = 0; c < classes; c++) mean += p[c * count + t] * rz[c * count + t];
      for (let c = 0; c < classes; c++)
        rDelta[c * count + t] = p[c * count + t] * (rz[c * count + t] - mean);
    }
  }

  /**
   * R{delta_l} = sigma''(z_l) R{z_l} g_l + sigma'(z_l) R{g_l} with g_l = W_{l+1}^T delta_{l+1},
   * so R{g_l} = V_{l+1}^T delta_{l+1} + W_{l+1}^T R{delta_{l+1}}.
   */
  private rBackPropagate(x: Float64Array, v: Float64Array, ws: Workspace): void {
    const r = this.rScratch(ws);
    const count = ws.count;
    for (let l = this.layers.length - 1; l > 0; l--) {
      const span = this.layers[l];
      const rBack = r.back.subarray(0, span.inputs * count);
      rBack.fill(0);
      transposeMultiplyAdd(v, span, ws.delta[l], count, rBack);
      transposeMultiplyAdd(x, span, r.delta[l], count, rBack);
      const z = ws.pre[l - 1];
      const rz = r.pre[l - 1];
      const back = ws.back[l - 1];
      const slope = ws.slope[l - 1];
      const rDelta = r.delta[l - 1];
      for (let k = 0; k < rBack.length; k++)
        rDelta[k] = this.activation.curvature(z[k]) * rz[k] * back[k] + slope[k] * rBack[k];
    }
  }

  private workspace(count: number): Workspace {
    const kept = this.workspaces.get(count);
    if (kept !== undefined) return kept;
    const perLayer = (spans: readonly LayerSpan[]) =>
      spans.map((span) => new Float64Array(span.outputs * count));
    const hiddenSpans = this.layers.slice(0, -1);
    const ws: Workspace = {
      count,
      pre: perLayer(this.layers),
      hidden: perLayer(hiddenSpans),
      slope: perLayer(hiddenSpans),
      delta: perLayer(this.layers),
      back: perLayer(hiddenSpans),
      probabilities: new Float64Array(this.classCount * count),
      r: null,
    };
    if (this.workspaces.size >= WORKSPACES_KEPT) {
      const oldest = this.workspaces.keys().next().value as number;
      this.workspaces.delete(oldest);
    }
    this.workspaces.set(count, ws);
    return ws;
  }

  private rScratch(ws: Workspace): NonNullable<Workspace['r']> {
    if (ws.r === null) {
      const widest = Math.max(...this.layers.map((span) => span.inputs));
      ws.r = {
        pre: ws.pre.map((a) => new Float64Array(a.length)),
        hidden: ws.hidden.map((a) => new Float64Array(a.length)),
        delta: ws.delta.map((a) => new Float64Array(a.length)),
        back: new Float64Array(widest * ws.count),
      };
    }
    return ws.r;
  }
}

/** z[o * count + t] += sum_i W[o][i] input[i * count + t], W the layer's block of w. */
function multiplyAdd(
  w: Float64Array,
  span: LayerSpan,
  input: Float64Array,
  count: number,
  z: Float64Array,
): void {
  for (let o = 0; o < span.outputs; o++) {
    const zAt = o * count;
    for (let i = 0; i < span.inputs; i++) {
      const weight = w[span.weightAt + o * span.inputs + i];
      const inAt = i * count;
      for (let t = 0; t < count; t++) z[zAt + t] += weight * input[inAt + t];
    }
  }
}

/** back[i * count + t] += sum_o W[o][i] delta[o * count + t]. */
function transposeMultiplyAdd(
  w: Float64Array,
  span: LayerSpan,
  delta: Float64Array,
  count: number,
  back: Float64Array,
): void {
  for (let o = 0; o < span.outputs; o++) {
    const deltaAt = o * count;
    for (let i = 0; i < span.inputs; i++) {
      const weight = w[span.weightAt + o * span.inputs + i];
      const backAt = i * count;
      for (let t = 0; t < count; t++) back[backAt + t] += weight * delta[deltaAt + t];
    }
  }
}

/** z[o * count + t] += b[o]. */
function addBias(w: Float64Array, span: LayerSpan, count: number, z: Float64Array): void {
  for (let o = 0; o < span.outputs; o++) {
    const bias = w[span.biasAt + o];
    for (let t = 0; t < count; t++) z[o * count + t] += bias;
  }
}

/** out[W[o][i]] += sum_t delta[o * count + t] input[i * count + t]. */
function outerAdd(
  delta: Float64Array,
  input: Float64Array,
  span: LayerSpan,
  count: number,
  out: Float64Array,
): void {
  for (let o = 0; o < span.outputs; o++) {
    for (let i = 0; i < span.inputs; i++) {
      let sum = 0;
      for (let t = 0; t < count; t++) sum += delta[o * count + t] * input[i * count + t];
      out[span.weightAt + o * span.inputs + i] += sum;
    }
  }
}
