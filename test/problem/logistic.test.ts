import { describe, expect, it } from 'vitest';
import { Rng } from '../../src/base/rng.js';
import { LogisticObjective } from '../../src/problem/logistic.js';
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

const LAMBDA = 0.01;

function setup(seed: number, n = 40, p = 5, lambda = LAMBDA) {
  const rng = Rng.fromSeed(seed);
  const shard = gaussianShard(rng, 0, n, p, 'binary', 1.2, 0.4);
  return { rng, shard, objective: new LogisticObjective(shard, lambda) };
}

describe('LogisticObjective', () => {
  it('computes the loss of the definition (direct per-sample formula log(1 + e^z) - b z)', () => {
    const { rng, shard, objective } = setup(1);
    const x = randomVector(rng, 5, 0.5);
    let expected = 0;
    for (let s = 0; s < shard.sampleCount; s++) {
      let z = 0;
      for (let j = 0; j < 5; j++) z += shard.features[s * 5 + j] * x[j];
      expected += Math.log(1 + Math.exp(z)) - shard.targets[s] * z;
    }
    expected =
      expected / shard.sampleCount + (LAMBDA / 2) * x.reduce((sum, xj) => sum + xj * xj, 0);
    expect(Math.abs(objective.loss(x) - expected) / expected).toBeLessThan(1e-13);
  });

  it('has a gradient equal to central differences of the loss (h = 1e-6, common practice)', () => {
    const { rng, objective } = setup(2);
    const x = randomVector(rng, 5);
    const gradient = new Float64Array(5);
    objective.gradient(x, gradient);
    expect(relativeError(gradient, centralDifferenceGradient(objective, x, 1e-6))).toBeLessThan(
      1e-6,
    );
  });

  it('has a Hessian-vector product equal to central differences of the gradient', () => {
    const { rng, objective } = setup(3);
    const x = randomVector(rng, 5);
    const v = randomVector(rng, 5);
    const hv = new Float64Array(5);
    objective.hessianVector(x, v, hv);
    expect(relativeError(hv, centralDifferenceHessianVector(objective, x, v, 1e-6))).toBeLessThan(
      1e-6,
    );
  });

  it('gives the full gradient bit for bit from a minibatch of every index', () => {
    const { rng, objective } = setup(4);
    const x = randomVector(rng, 5);
    const full = new Float64Array(5);
    const batch = new Float64Array(5);
    objective.gradient(x, full);
    objective.minibatchGradient(
      x,
      Uint32Array.from({ length: 40 }, (_, s) => s),
      batch,
    );
    expect(Array.from(batch)).toEqual(Array.from(full));
  });

  it('stays finite and exact at |a.x| = 1e4, where log(1 + e^z) overflows when evaluated naively', () => {
    // One sample a = (1) and lambda = 0, so z = x. The analytic values: log(1 + e^z) - b z tends
    // to z (b = 0) or to e^-z, which is 0 in double precision (b = 1), for z = 1e4; symmetrically
    // for z = -1e4. The gradient sigma(z) - b tends to 1 - b and to -b.
    const cases = [
      { z: 1e4, label: 0, loss: 1e4, gradient: 1 },
      { z: 1e4, label: 1, loss: 0, gradient: 0 },
      { z: -1e4, label: 0, loss: 0, gradient: 0 },
      { z: -1e4, label: 1, loss: 1e4, gradient: -1 },
    ];
    expect(Math.log(1 + Math.exp(1e4))).toBe(Infinity);
    for (const c of cases) {
      const objective = new LogisticObjective(
        {
          clientId: 0,
          sampleCount: 1,
          featureCount: 1,
          features: Float64Array.of(1),
          targets: Float64Array.of(c.label),
        },
        0,
      );
      const x = Float64Array.of(c.z);
      const gradient = new Float64Array(1);
      objective.gradient(x, gradient);
      expect(objective.loss(x)).toBe(c.loss);
      expect(gradient[0]).toBe(c.gradient);
    }
  });

  it('has Hessian extremes within [mu bound, L bound] at random points (reference: ml-matrix EigenvalueDecomposition)', () => {
    const { rng, objective } = setup(5, 60, 6);
    const lower = objective.strongConvexityBound();
    const upper = objective.smoothnessBound();
    for (let trial = 0; trial < 5; trial++) {
      const { smallest, largest } = symmetricExtremes(
        hessianMatrix(objective, randomVector(rng, 6, 2)),
      );
      expect(smallest).toBeGreaterThanOrEqual(lower * (1 - 1e-12));
      expect(largest).toBeLessThanOrEqual(upper * (1 + 1e-12));
    }
  });

  it('has a tight L bound: the Hessian at x = 0 attains it, since sigma(0)(1 - sigma(0)) = 1/4', () => {
    const { objective } = setup(6, 50, 6);
    const { largest } = symmetricExtremes(hessianMatrix(objective, new Float64Array(6)));
    expect(Math.abs(objective.smoothnessBound() - largest) / largest).toBeLessThan(1e-9);
  });

  it('rejects labels other than 0 and 1', () => {
    const { shard } = setup(7);
    const targets = Float64Array.from(shard.targets);
    targets[2] = 2;
    expect(errorCode(() => new LogisticObjective({ ...shard, targets }, LAMBDA))).toBe(
      'E_PROBLEM_TARGET',
    );
    targets[2] = -1;
    expect(errorCode(() => new LogisticObjective({ ...shard, targets }, LAMBDA))).toBe(
      'E_PROBLEM_TARGET',
    );
  });
});
