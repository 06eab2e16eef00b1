import { Matrix } from 'ml-matrix';
import { describe, expect, it } from 'vitest';
import { Rng } from '../../src/base/rng.js';
import { LeastSquaresObjective } from '../../src/problem/least-squares.js';
import {
  centralDifferenceGradient,
  centralDifferenceHessianVector,
  errorCode,
  featureMatrix,
  gaussianShard,
  randomVector,
  relativeError,
  symmetricExtremes,
} from './fixtures.js';

const LAMBDA = 0.05;

function setup(seed: number, n = 30, p = 6, lambda = LAMBDA) {
  const rng = Rng.fromSeed(seed);
  const shard = gaussianShard(rng, 0, n, p, 'real', 1.5, 0.5);
  return { rng, shard, objective: new LeastSquaresObjective(shard, lambda) };
}

describe('LeastSquaresObjective', () => {
  it('computes the loss of the definition (reference: ml-matrix products)', () => {
    const { rng, shard, objective } = setup(1);
    const x = randomVector(rng, 6);
    const a = featureMatrix(shard);
    const residual = a
      .mmul(Matrix.columnVector(Array.from(x)))
      .sub(Matrix.columnVector(Array.from(shard.targets)));
    const expected =
      residual.dot(residual) / (2 * shard.sampleCount) +
      (LAMBDA / 2) * Matrix.rowVector(Array.from(x)).dot(Matrix.rowVector(Array.from(x)));
    expect(Math.abs(objective.loss(x) - expected) / expected).toBeLessThan(1e-13);
  });

  it('gives the bits of the left-to-right loop, for row counts around its blocks of four rows', () => {
    // The reference is the definition summed in the order every recorded f(x) used: each
    // residual -b_s + sum_j a_sj x_j left to right, the squares in row order.
    for (const n of [1, 2, 3, 4, 5, 7, 8, 9, 13]) {
      const { rng, shard, objective } = setup(40 + n, n, 11);
      const x = randomVector(rng, 11);
      let sum = 0;
      for (let s = 0; s < n; s++) {
        let residual = -shard.targets[s];
        for (let j = 0; j < 11; j++) residual += shard.features[s * 11 + j] * x[j];
        sum += residual * residual;
      }
      let xx = 0;
      for (let j = 0; j < 11; j++) xx += x[j] * x[j];
      const expected = (0.5 * sum) / n + 0.5 * LAMBDA * xx;
      expect(Object.is(objective.loss(x), expected), `n = ${n}`).toBe(true);
    }
  });

  it('has a gradient equal to central differences of the loss (h = 1e-6, common practice)', () => {
    const { rng, objective } = setup(2);
    const x = randomVector(rng, 6);
    const gradient = new Float64Array(6);
    objective.gradient(x, gradient);
    expect(relativeError(gradient, centralDifferenceGradient(objective, x, 1e-6))).toBeLessThan(
      1e-6,
    );
  });

  it('has a Hessian-vector product equal to central differences of the gradient and to A^T A v / n + lambda v (ml-matrix)', () => {
    const { rng, shard, objective } = setup(3);
    const x = randomVector(rng, 6);
    const v = randomVector(rng, 6);
    const hv = new Float64Array(6);
    objective.hessianVector(x, v, hv);
    expect(relativeError(hv, centralDifferenceHessianVector(objective, x, v, 1e-6))).toBeLessThan(
      1e-6,
    );
    const a = featureMatrix(shard);
    const reference = a
      .transpose()
      .mmul(a.mmul(Matrix.columnVector(Array.from(v))))
      .div(shard.sampleCount)
      .add(Matrix.columnVector(Array.from(v)).mul(LAMBDA))
      .getColumn(0);
    expect(relativeError(hv, reference)).toBeLessThan(1e-13);
  });

  it('gives the full gradient bit for bit from a minibatch of every index, and the batch mean otherwise', () => {
    const { rng, objective } = setup(4);
    const x = randomVector(rng, 6);
    const full = new Float64Array(6);
    const batch = new Float64Array(6);
    objective.gradient(x, full);
    objective.minibatchGradient(
      x,
      Uint32Array.from({ length: 30 }, (_, s) => s),
      batch,
    );
    expect(Array.from(batch)).toEqual(Array.from(full));

    // The mean over {3, 7} is the mean of the two single-sample gradients (definition).
    const g3 = new Float64Array(6);
    const g7 = new Float64Array(6);
    objective.minibatchGradient(x, Uint32Array.of(3), g3);
    objective.minibatchGradient(x, Uint32Array.of(7), g7);
    objective.minibatchGradient(x, Uint32Array.of(3, 7), batch);
    expect(
      relativeError(
        batch,
        g3.map((g, j) => (g + g7[j]) / 2),
      ),
    ).toBeLessThan(1e-14);
  });

  it('reports the exact extreme Hessian eigenvalues (reference: ml-matrix EigenvalueDecomposition)', () => {
    const { shard, objective } = setup(5, 40, 8);
    const a = featureMatrix(shard);
    const hessian = a.transpose().mmul(a).div(shard.sampleCount).add(Matrix.eye(8).mul(LAMBDA));
    const { smallest, largest } = symmetricExtremes(hessian);
    expect(Math.abs(objective.smoothnessBound() - largest) / largest).toBeLessThan(1e-9);
    expect(Math.abs(objective.strongConvexityBound() - smallest) / smallest).toBeLessThan(1e-9);
  });

  it('reports mu = lambda exactly when there are fewer samples than features (A^T A / n is singular)', () => {
    const { objective } = setup(6, 4, 10, 0.3);
    expect(objective.strongConvexityBound()).toBe(0.3);
  });

  it('rejects malformed shards, vectors and batches with stable codes', () => {
    const { shard, objective } = setup(7);
    expect(
      errorCode(
        () => new LeastSquaresObjective({ ...shard, targets: shard.targets.subarray(1) }, LAMBDA),
      ),
    ).toBe('E_PROBLEM_SHARD_SHAPE');
    expect(
      errorCode(
        () =>
          new LeastSquaresObjective(
            {
              ...shard,
              sampleCount: 0,
              features: new Float64Array(0),
              targets: new Float64Array(0),
            },
            LAMBDA,
          ),
      ),
    ).toBe('E_PROBLEM_SHARD_SHAPE');
    const poisoned = Float64Array.from(shard.features);
    poisoned[5] = Number.NaN;
    expect(
      errorCode(() => new LeastSquaresObjective({ ...shard, features: poisoned }, LAMBDA)),
    ).toBe('E_PROBLEM_NOT_FINITE');
    expect(errorCode(() => new LeastSquaresObjective(shard, -1))).toBe('E_PROBLEM_SPEC');
    expect(errorCode(() => objective.loss(new Float64Array(5)))).toBe('E_PROBLEM_DIMENSION');
    expect(
      errorCode(() =>
        objective.minibatchGradient(new Float64Array(6), Uint32Array.of(30), new Float64Array(6)),
      ),
    ).toBe('E_PROBLEM_BATCH');
    expect(
      errorCode(() =>
        objective.minibatchGradient(new Float64Array(6), new Uint32Array(0), new Float64Array(6)),
      ),
    ).toBe('E_PROBLEM_BATCH');
  });
});
