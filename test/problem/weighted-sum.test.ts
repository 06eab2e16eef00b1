import { Matrix } from 'ml-matrix';
import { describe, expect, it } from 'vitest';
import { Rng } from '../../src/base/rng.js';
import { LeastSquaresObjective } from '../../src/problem/least-squares.js';
import { LogisticObjective } from '../../src/problem/logistic.js';
import type { Objective } from '../../src/problem/objective.js';
import { WeightedSumObjective } from '../../src/problem/weighted-sum.js';
import type { Shard } from '../../src/problem/shard.js';
import {
  errorCode,
  featureMatrix,
  gaussianShard,
  randomVector,
  relativeError,
  symmetricExtremes,
} from './fixtures.js';

const P = 5;
const LAMBDA = 0.01;

function logisticClients(seed: number, sizes: number[]): LogisticObjective[] {
  const rng = Rng.fromSeed(seed);
  return sizes.map(
    (n, i) => new LogisticObjective(gaussianShard(rng, i, n, P, 'binary', 1, 0.8), LAMBDA),
  );
}

function weightedReference(clients: Objective[], weights: number[], x: Float64Array) {
  const gradient = new Float64Array(P);
  const hv = new Float64Array(P);
  const part = new Float64Array(P);
  const v = Float64Array.from({ length: P }, (_, j) => j + 1);
  let loss = 0;
  clients.forEach((client, i) => {
    loss += weights[i] * client.loss(x);
    client.gradient(x, part);
    part.forEach((g, j) => (gradient[j] += weights[i] * g));
    client.hessianVector(x, v, part);
    part.forEach((g, j) => (hv[j] += weights[i] * g));
  });
  return { loss, gradient, hv, v };
}

/** sum_i p_i A_i^T A_i / n_i + lambda I by ml-matrix, the reference the objectives are held to. */
function pooledHessian(shards: readonly Shard[], weights: readonly number[]): Matrix {
  let hessian = Matrix.eye(P).mul(LAMBDA);
  shards.forEach((shard, i) => {
    const a = featureMatrix(shard);
    hessian = hessian.add(
      a
        .transpose()
        .mmul(a)
        .mul(weights[i] / shard.sampleCount),
    );
  });
  return hessian;
}

describe('WeightedSumObjective', () => {
  it('has loss, gradient and Hessian-vector product equal to the weighted sums of the clients (definition)', () => {
    const clients = logisticClients(1, [12, 30, 7]);
    const weights = [0.5, 0.2, 0.3];
    const sum = new WeightedSumObjective(clients, weights);
    const x = randomVector(Rng.fromSeed(2), P);
    const reference = weightedReference(clients, weights, x);
    const gradient = new Float64Array(P);
    const hv = new Float64Array(P);
    sum.gradient(x, gradient);
    sum.hessianVector(x, reference.v, hv);
    expect(Math.abs(sum.loss(x) - reference.loss) / reference.loss).toBeLessThan(1e-15);
    expect(relativeError(gradient, reference.gradient)).toBeLessThan(1e-15);
    expect(relativeError(hv, reference.hv)).toBeLessThan(1e-15);
    expect(sum.sampleCount).toBe(49);
    expect(sum.regularization).toBeCloseTo(LAMBDA, 15);
  });

  it('gives the full gradient from a minibatch of every sample', () => {
    const clients = logisticClients(3, [12, 30, 7]);
    const sum = new WeightedSumObjective(clients, [0.5, 0.2, 0.3]);
    const x = randomVector(Rng.fromSeed(4), P);
    const full = new Float64Array(P);
    const batch = new Float64Array(P);
    sum.gradient(x, full);
    sum.minibatchGradient(
      x,
      Uint32Array.from({ length: 49 }, (_, s) => s),
      batch,
    );
    expect(relativeError(batch, full)).toBeLessThan(1e-14);
  });

  it('has an unbiased minibatch gradient: its mean over every batch of size 3 is the full gradient (Horvitz and Thompson, JASA 1952)', () => {
    const clients = logisticClients(5, [2, 2, 3]);
    const sum = new WeightedSumObjective(clients, [0.6, 0.1, 0.3]);
    const x = randomVector(Rng.fromSeed(6), P);
    const full = new Float64Array(P);
    sum.gradient(x, full);
    const mean = new Float64Array(P);
    const batch = new Float64Array(P);
    let batches = 0;
    for (let a = 0; a < 7; a++) {
      for (let b = a + 1; b < 7; b++) {
        for (let c = b + 1; c < 7; c++) {
          sum.minibatchGradient(x, Uint32Array.of(a, b, c), batch);
          batch.forEach((g, j) => (mean[j] += g));
          batches++;
        }
      }
    }
    expect(batches).toBe(35);
    expect(
      relativeError(
        mean.map((g) => g / batches),
        full,
      ),
    ).toBeLessThan(1e-13);
  });

  it('with weights n_i / n, a minibatch gradient is the plain mean of the per-sample gradients', () => {
    const sizes = [4, 6, 5];
    const clients = logisticClients(7, sizes);
    const sum = new WeightedSumObjective(
      clients,
      sizes.map((n) => n / 15),
    );
    const x = randomVector(Rng.fromSeed(8), P);
    const indices = Uint32Array.of(1, 5, 9, 14);
    const batch = new Float64Array(P);
    sum.minibatchGradient(x, indices, batch);
    // Global sample s belongs to client 0 for s < 4, client 1 for s < 10, client 2 otherwise.
    const mean = new Float64Array(P);
    const one = new Float64Array(P);
    for (const s of indices) {
      const [client, local] = s < 4 ? [0, s] : s < 10 ? [1, s - 4] : [2, s - 10];
      clients[client].minibatchGradient(x, Uint32Array.of(local), one);
      one.forEach((g, j) => (mean[j] += g / indices.length));
    }
    expect(relativeError(batch, mean)).toBeLessThan(1e-14);
  });

  it('reports exact curvature for least squares (reference: ml-matrix EigenvalueDecomposition of sum_i p_i A_i^T A_i / n_i + lambda I)', () => {
    const rng = Rng.fromSeed(9);
    const shards = [15, 25, 9].map((n, i) => gaussianShard(rng, i, n, P, 'real', 1 + i, 0.5 * i));
    const weights = [0.25, 0.35, 0.4];
    const sum = new WeightedSumObjective(
      shards.map((shard) => new LeastSquaresObjective(shard, LAMBDA)),
      weights,
    );
    const hessian = pooledHessian(shards, weights);
    const { smallest, largest } = symmetricExtremes(hessian);
    expect(Math.abs(sum.smoothnessBound() - largest) / largest).toBeLessThan(1e-9);
    expect(Math.abs(sum.strongConvexityBound() - smallest) / smallest).toBeLessThan(1e-9);
  });

  it('applies least squares through its formed Hessian where there are at least as many samples as features, as ml-matrix sum_i p_i A_i^T A_i / n_i + lambda I does (1e-13 relative), and nowhere else', () => {
    const rng = Rng.fromSeed(10);
    const shards = [4, 3].map((n, i) => gaussianShard(rng, i, n, P, 'real', 1 + i, 0.5));
    const weights = [0.6, 0.4];
    const clients = shards.map((shard) => new LeastSquaresObjective(shard, LAMBDA));
    const formed = new WeightedSumObjective(clients, weights).formedHessian();
    expect(formed).not.toBeNull();
    const hessian = pooledHessian(shards, weights);
    const v = randomVector(rng, P);
    const out = new Float64Array(P);
    formed?.(v, out);
    const expected = hessian.mmul(Matrix.columnVector(Array.from(v))).getColumn(0);
    expect(relativeError(out, expected)).toBeLessThan(1e-13);
    // Fewer samples than features: the data part is rank-deficient and never formed.
    expect(new WeightedSumObjective(clients.slice(1), [1]).formedHessian()).toBeNull();
    expect(
      new WeightedSumObjective(logisticClients(10, [12, 30]), [0.3, 0.7]).formedHessian(),
    ).toBeNull();
  });

  it('reports weighted sums of the clients bounds for logistic', () => {
    const clients = logisticClients(10, [12, 30]);
    const sum = new WeightedSumObjective(clients, [0.3, 0.7]);
    expect(sum.smoothnessBound()).toBeCloseTo(
      0.3 * clients[0].smoothnessBound() + 0.7 * clients[1].smoothnessBound(),
      14,
    );
    expect(sum.strongConvexityBound()).toBeCloseTo(LAMBDA, 15);
  });

  it('rejects mixed dimensions and bad weights', () => {
    const clients = logisticClients(11, [5, 5]);
    const other = new LogisticObjective(
      gaussianShard(Rng.fromSeed(12), 2, 5, P + 1, 'binary'),
      LAMBDA,
    );
    expect(errorCode(() => new WeightedSumObjective([clients[0], other], [0.5, 0.5]))).toBe(
      'E_PROBLEM_DIMENSION',
    );
    expect(errorCode(() => new WeightedSumObjective(clients, [0.5]))).toBe('E_PROBLEM_WEIGHTS');
    expect(errorCode(() => new WeightedSumObjective(clients, [1, -0.5]))).toBe('E_PROBLEM_WEIGHTS');
    expect(errorCode(() => new WeightedSumObjective(clients, [0, 0]))).toBe('E_PROBLEM_WEIGHTS');
    expect(errorCode(() => new WeightedSumObjective(clients, [0.5, Number.NaN]))).toBe(
      'E_PROBLEM_WEIGHTS',
    );
    const sum = new WeightedSumObjective(clients, [0.5, 0.5]);
    expect(
      errorCode(() =>
        sum.minibatchGradient(new Float64Array(P), Uint32Array.of(10), new Float64Array(P)),
      ),
    ).toBe('E_PROBLEM_BATCH');
  });
});
