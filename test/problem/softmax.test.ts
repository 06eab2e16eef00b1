import { describe, expect, it } from 'vitest';
import { Rng } from '../../src/base/rng.js';
import { SoftmaxObjective } from '../../src/problem/softmax.js';
import {
  centralDifferenceGradient,
  centralDifferenceHessianVector,
  errorCode,
  gaussianShard,
  hessianMatrix,
  randomVector,
  relativeError,
  symmetricExtremes,
} from './fixtures.js';

const LAMBDA = 0.02;
const CLASSES = 4;
const FEATURES = 3;
const DIM = CLASSES * FEATURES;

function setup(seed: number, n = 40, lambda = LAMBDA) {
  const rng = Rng.fromSeed(seed);
  const shard = gaussianShard(rng, 0, n, FEATURES, CLASSES, 1.3, 0.3);
  return { rng, shard, objective: new SoftmaxObjective(shard, lambda, CLASSES) };
}

/** One sample with feature a = (1), so the logits are W itself. */
function singleSample(label: number, classes: number): SoftmaxObjective {
  return new SoftmaxObjective(
    {
      clientId: 0,
      sampleCount: 1,
      featureCount: 1,
      features: Float64Array.of(1),
      targets: Float64Array.of(label),
    },
    0,
    classes,
  );
}

describe('SoftmaxObjective', () => {
  it('computes the loss of the definition (direct formula log sum_c e^{z_c} - z_b)', () => {
    const { rng, shard, objective } = setup(1);
    const w = randomVector(rng, DIM, 0.5);
    let expected = 0;
    for (let s = 0; s < shard.sampleCount; s++) {
      const logits = Array.from({ length: CLASSES }, (_, c) => {
        let z = 0;
        for (let j = 0; j < FEATURES; j++)
          z += w[c * FEATURES + j] * shard.features[s * FEATURES + j];
        return z;
      });
      expected +=
        Math.log(logits.reduce((sum, z) => sum + Math.exp(z), 0)) - logits[shard.targets[s]];
    }
    expected =
      expected / shard.sampleCount + (LAMBDA / 2) * w.reduce((sum, wj) => sum + wj * wj, 0);
    expect(Math.abs(objective.loss(w) - expected) / expected).toBeLessThan(1e-13);
  });

  it('has a gradient equal to central differences of the loss (h = 1e-6, common practice)', () => {
    const { rng, objective } = setup(2);
    const w = randomVector(rng, DIM);
    const gradient = new Float64Array(DIM);
    objective.gradient(w, gradient);
    expect(relativeError(gradient, centralDifferenceGradient(objective, w, 1e-6))).toBeLessThan(
      1e-6,
    );
  });

  it('has a Hessian-vector product equal to central differences of the gradient', () => {
    const { rng, objective } = setup(3);
    const w = randomVector(rng, DIM);
    const v = randomVector(rng, DIM);
    const hv = new Float64Array(DIM);
    objective.hessianVector(w, v, hv);
    expect(relativeError(hv, centralDifferenceHessianVector(objective, w, v, 1e-6))).toBeLessThan(
      1e-6,
    );
  });

  it('gives the full gradient bit for bit from a minibatch of every index', () => {
    const { rng, objective } = setup(4);
    const w = randomVector(rng, DIM);
    const full = new Float64Array(DIM);
    const batch = new Float64Array(DIM);
    objective.gradient(w, full);
    objective.minibatchGradient(
      w,
      Uint32Array.from({ length: 40 }, (_, s) => s),
      batch,
    );
    expect(Array.from(batch)).toEqual(Array.from(full));
  });

  it('stays finite and exact with logits of 1e4 (analytic limits of logsumexp)', () => {
    // Logits (1e4, 0, -1e4): logsumexp = 1e4 + log(1 + e^-1e4 + e^-2e4), which is 1e4 in double
    // precision, so the losses are 0, 1e4 and 2e4 and the softmax is (1, 0, 0) exactly.
    const spread = Float64Array.of(1e4, 0, -1e4);
    const expectedLoss = [0, 1e4, 2e4];
    for (let label = 0; label < 3; label++) {
      const objective = singleSample(label, 3);
      const gradient = new Float64Array(3);
      objective.gradient(spread, gradient);
      expect(objective.loss(spread)).toBe(expectedLoss[label]);
      const expectedGradient = [1, 0, 0];
      expectedGradient[label] -= 1;
      expect(Array.from(gradient)).toEqual(expectedGradient);
    }
    // Logits (1e4, 1e4, 0): logsumexp - z_0 = log 2 + log(1 + e^-1e4 / 2) = log 2, and the
    // softmax is (1/2, 1/2, 0).
    const tied = Float64Array.of(1e4, 1e4, 0);
    const objective = singleSample(0, 3);
    const gradient = new Float64Array(3);
    objective.gradient(tied, gradient);
    expect(Math.abs(objective.loss(tied) - Math.LN2)).toBeLessThan(1e-15);
    expect(Array.from(gradient)).toEqual([-0.5, 0.5, 0]);
    const hv = new Float64Array(3);
    objective.hessianVector(tied, Float64Array.of(1, 0, 0), hv);
    // (diag(s) - s s^T) e_0 with s = (1/2, 1/2, 0) is (1/4, -1/4, 0).
    expect(Array.from(hv)).toEqual([0.25, -0.25, 0]);
  });

  it('has Hessian extremes within [mu bound, L bound] at random points (reference: ml-matrix EigenvalueDecomposition)', () => {
    const { rng, objective } = setup(5, 60);
    const lower = objective.strongConvexityBound();
    const upper = objective.smoothnessBound();
    for (let trial = 0; trial < 5; trial++) {
      const { smallest, largest } = symmetricExtremes(
        hessianMatrix(objective, randomVector(rng, DIM, 2)),
      );
      expect(smallest).toBeGreaterThanOrEqual(lower * (1 - 1e-9));
      expect(largest).toBeLessThanOrEqual(upper * (1 + 1e-12));
      // The loss is invariant under adding one vector to every class row, so its Hessian is flat
      // along those directions and the smallest eigenvalue is lambda itself.
      expect(Math.abs(smallest - LAMBDA) / LAMBDA).toBeLessThan(1e-9);
    }
  });

  it('rejects labels that are not class indices and a class count below 2', () => {
    const { shard } = setup(6);
    const targets = Float64Array.from(shard.targets);
    targets[0] = CLASSES;
    expect(errorCode(() => new SoftmaxObjective({ ...shard, targets }, LAMBDA, CLASSES))).toBe(
      'E_PROBLEM_TARGET',
    );
    targets[0] = 0.5;
    expect(errorCode(() => new SoftmaxObjective({ ...shard, targets }, LAMBDA, CLASSES))).toBe(
      'E_PROBLEM_TARGET',
    );
    expect(errorCode(() => new SoftmaxObjective(shard, LAMBDA, 1))).toBe('E_PROBLEM_SPEC');
  });
});
