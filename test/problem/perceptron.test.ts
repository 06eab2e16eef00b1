import { describe, expect, it } from 'vitest';
import { Rng } from '../../src/base/rng.js';
import type { ActivationName } from '../../src/problem/activation.js';
import { PerceptronObjective } from '../../src/problem/perceptron.js';
import { perceptronParameterCount } from '../../src/problem/perceptron-layout.js';
import {
  centralDifferenceGradient,
  centralDifferenceHessianVector,
  errorCode,
  gaussianShard,
  randomVector,
  relativeError,
} from './fixtures.js';

const LAMBDA = 0.01;
const CLASSES = 3;
const FEATURES = 4;

function setup(seed: number, hiddenWidths: number[], activation: ActivationName, n = 30) {
  const rng = Rng.fromSeed(seed);
  const shard = gaussianShard(rng, 0, n, FEATURES, CLASSES, 1.2, 0.3);
  const objective = new PerceptronObjective(shard, LAMBDA, {
    hiddenWidths,
    activation,
    classCount: CLASSES,
  });
  return { rng, shard, objective };
}

const shapes: [number[], ActivationName][] = [
  [[5], 'tanh'],
  [[5], 'softplus'],
  [[5, 3], 'tanh'],
  [[4, 6], 'softplus'],
];

describe('PerceptronObjective', () => {
  it('has one weight and bias per connection and unit', () => {
    const { objective } = setup(1, [5, 3], 'tanh');
    // (4 + 1) x 5 + (5 + 1) x 3 + (3 + 1) x 3 = 25 + 18 + 12
    expect(objective.dim).toBe(55);
    expect(perceptronParameterCount(FEATURES, [5, 3], CLASSES)).toBe(55);
  });

  it('computes the loss of the definition (a direct forward pass per sample)', () => {
    const { rng, shard, objective } = setup(2, [5], 'tanh');
    const x = randomVector(rng, objective.dim, 0.5);
    // Layout: W_0 (5 x 4) row-major, b_0 (5), W_1 (3 x 5), b_1 (3).
    let expected = 0;
    for (let s = 0; s < shard.sampleCount; s++) {
      const a = shard.features.subarray(s * FEATURES, (s + 1) * FEATURES);
      const h = Array.from({ length: 5 }, (_, o) => {
        let z = x[20 + o];
        for (let i = 0; i < FEATURES; i++) z += x[o * FEATURES + i] * a[i];
        return Math.tanh(z);
      });
      const logits = Array.from({ length: CLASSES }, (_, c) => {
        let z = x[25 + 15 + c];
        for (let i = 0; i < 5; i++) z += x[25 + c * 5 + i] * h[i];
        return z;
      });
      expected +=
        Math.log(logits.reduce((sum, z) => sum + Math.exp(z), 0)) - logits[shard.targets[s]];
    }
    expected = expected / shard.sampleCount + (LAMBDA / 2) * x.reduce((sum, v) => sum + v * v, 0);
    // Same operations in another order: a few ulps apart (common practice for reordered sums).
    expect(Math.abs(objective.loss(x) - expected) / expected).toBeLessThan(1e-13);
  });

  // Central differences err by O(h^2) truncation plus O(eps |f| / h) rounding; with h = 1e-5,
  // eps = 2.2e-16 and |f|, its third derivatives of order 1, both are near 1e-10 per entry, so a
  // relative error below 1e-6 leaves a wide margin while a wrong term (a missing bias, a wrong
  // slope) shows as an error of order 1 (common practice for gradient checks).
  for (const [widths, activation] of shapes) {
    it(`has a gradient equal to central differences of the loss (${widths.join('-')}, ${activation})`, () => {
      for (const seed of [3, 4]) {
        const { rng, objective } = setup(seed, widths, activation);
        const x = randomVector(rng, objective.dim, 0.7);
        const gradient = new Float64Array(objective.dim);
        objective.gradient(x, gradient);
        expect(relativeError(gradient, centralDifferenceGradient(objective, x, 1e-5))).toBeLessThan(
          1e-6,
        );
      }
    });

    it(`has a Hessian-vector product equal to central differences of the gradient (${widths.join('-')}, ${activation})`, () => {
      for (const seed of [5, 6]) {
        const { rng, objective } = setup(seed, widths, activation);
        const x = randomVector(rng, objective.dim, 0.7);
        const v = randomVector(rng, objective.dim);
        const hv = new Float64Array(objective.dim);
        objective.hessianVector(x, v, hv);
        expect(
          relativeError(hv, centralDifferenceHessianVector(objective, x, v, 1e-5)),
        ).toBeLessThan(1e-6);
      }
    });
  }

  it('has a symmetric Hessian: u . Hv = v . Hu to rounding (Schwarz)', () => {
    const { rng, objective } = setup(7, [4, 6], 'tanh');
    const x = randomVector(rng, objective.dim, 0.7);
    const u = randomVector(rng, objective.dim);
    const v = randomVector(rng, objective.dim);
    const hu = new Float64Array(objective.dim);
    const hv = new Float64Array(objective.dim);
    objective.hessianVector(x, u, hu);
    objective.hessianVector(x, v, hv);
    const uHv = u.reduce((sum, ui, j) => sum + ui * hv[j], 0);
    const vHu = v.reduce((sum, vi, j) => sum + vi * hu[j], 0);
    expect(Math.abs(uHv - vHu) / Math.abs(uHv)).toBeLessThan(1e-12);
  });

  it('is nonconvex: some curvature along a direction is negative at a random point', () => {
    const { rng, objective } = setup(8, [5], 'tanh');
    const x = randomVector(rng, objective.dim, 1.5);
    const hv = new Float64Array(objective.dim);
    let smallest = Infinity;
    for (let k = 0; k < 40; k++) {
      const v = randomVector(rng, objective.dim);
      objective.hessianVector(x, v, hv);
      const curvature = v.reduce((sum, vj, j) => sum + vj * hv[j], 0);
      smallest = Math.min(smallest, curvature);
    }
    expect(smallest).toBeLessThan(0);
    expect(objective.smoothnessBound()).toBe(Infinity);
    expect(objective.strongConvexityBound()).toBe(-Infinity);
  });

  it('gives the full gradient bit for bit from a minibatch of every sample in order', () => {
    const { rng, objective } = setup(9, [5, 3], 'softplus');
    const x = randomVector(rng, objective.dim, 0.7);
    const full = new Float64Array(objective.dim);
    const batch = new Float64Array(objective.dim);
    objective.gradient(x, full);
    const every = Uint32Array.from({ length: objective.sampleCount }, (_, s) => s);
    objective.minibatchGradient(x, every, batch);
    expect(Array.from(batch)).toEqual(Array.from(full));
  });

  it('takes a minibatch longer than the shard (repeated samples) as the mean over it', () => {
    const { rng, objective } = setup(10, [5], 'tanh', 6);
    const x = randomVector(rng, objective.dim, 0.7);
    const twice = Uint32Array.from({ length: 12 }, (_, t) => t % 6);
    const once = Uint32Array.from({ length: 6 }, (_, t) => t);
    const a = new Float64Array(objective.dim);
    const b = new Float64Array(objective.dim);
    objective.minibatchGradient(x, twice, a);
    objective.minibatchGradient(x, once, b);
    expect(relativeError(a, b)).toBeLessThan(1e-14);
  });

  it('refuses labels outside the classes and a shape it cannot build', () => {
    const rng = Rng.fromSeed(11);
    const shard = gaussianShard(rng, 0, 10, FEATURES, CLASSES);
    const shape = { hiddenWidths: [3], activation: 'tanh' as const, classCount: 2 };
    expect(errorCode(() => new PerceptronObjective(shard, LAMBDA, shape))).toBe('E_PROBLEM_TARGET');
    for (const hiddenWidths of [[], [2, 2, 2], [0]]) {
      expect(
        errorCode(
          () => new PerceptronObjective(shard, LAMBDA, { ...shape, classCount: 3, hiddenWidths }),
        ),
      ).toBe('E_PROBLEM_SPEC');
    }
  });
});
