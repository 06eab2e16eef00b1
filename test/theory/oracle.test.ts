import { CholeskyDecomposition, Matrix } from 'ml-matrix';
import { describe, expect, it } from 'vitest';
import type { Shard } from '../../src/problem/shard.js';
import { Rng } from '../../src/base/rng.js';
import { LeastSquaresObjective } from '../../src/problem/least-squares.js';
import { LogisticObjective } from '../../src/problem/logistic.js';
import { SoftmaxObjective } from '../../src/problem/softmax.js';
import { WeightedSumObjective } from '../../src/problem/weighted-sum.js';
import { solveOptimum } from '../../src/theory/oracle.js';
import { errorCode, featureMatrix, gaussianShard, relativeError } from '../problem/fixtures.js';

/** 20 clients of 10 to 40 samples, feature means shifted per client; weights n_i / n. */
function federatedShards(
  seed: number,
  p: number,
  targets: 'binary' | number,
): { shards: Shard[]; weights: number[] } {
  const rng = Rng.fromSeed(seed);
  const shards = Array.from({ length: 20 }, (_, i) =>
    gaussianShard(rng, i, 10 + rng.nextInt(31), p, targets, 1.5, 1),
  );
  const total = shards.reduce((sum, shard) => sum + shard.sampleCount, 0);
  return { shards, weights: shards.map((shard) => shard.sampleCount / total) };
}

/**
 * grad f for logistic or softmax, written out sample by sample with the textbook formulas and no
 * code shared with the objectives: (sigma(z) - b) a, or (softmax(Wa) - e_b) a^T, plus lambda x.
 */
function independentGradient(
  shards: Shard[],
  weights: number[],
  lambda: number,
  classes: number | null,
  x: Float64Array,
): number[] {
  const gradient = Array.from(x, (xj) => lambda * xj);
  shards.forEach((shard, i) => {
    const p = shard.featureCount;
    for (let s = 0; s < shard.sampleCount; s++) {
      const a = Array.from(shard.features.subarray(s * p, (s + 1) * p));
      const logit = (row: number) => a.reduce((sum, aj, j) => sum + aj * x[row * p + j], 0);
      const share = weights[i] / shard.sampleCount;
      if (classes === null) {
        const residual = 1 / (1 + Math.exp(-logit(0))) - shard.targets[s];
        a.forEach((aj, j) => (gradient[j] += share * residual * aj));
      } else {
        const logits = Array.from({ length: classes }, (_, c) => logit(c));
        const exps = logits.map(Math.exp);
        const total = exps.reduce((sum, e) => sum + e, 0);
        for (let c = 0; c < classes; c++) {
          const residual = exps[c] / total - (shard.targets[s] === c ? 1 : 0);
          a.forEach((aj, j) => (gradient[c * p + j] += share * residual * aj));
        }
      }
    }
  });
  return gradient;
}

const norm = (v: number[]) => Math.sqrt(v.reduce((sum, g) => sum + g * g, 0));

describe('solveOptimum', () => {
  it('solves weighted least squares as ml-matrix solves the normal equations (x* and f* to 1e-9)', () => {
    const rng = Rng.fromSeed(1);
    const p = 8;
    const lambda = 1e-3;
    const shards = [25, 40, 12, 60].map((n, i) =>
      gaussianShard(rng, i, n, p, 'real', 1 + 0.5 * i, 0.7),
    );
    const weights = [0.1, 0.4, 0.2, 0.3];
    const global = new WeightedSumObjective(
      shards.map((shard) => new LeastSquaresObjective(shard, lambda)),
      weights,
    );

    // Normal equations sum_i p_i (A_i^T A_i / n_i) x = sum_i p_i A_i^T b_i / n_i, plus lambda I.
    let normal = Matrix.eye(p).mul(lambda);
    let rhs = Matrix.zeros(p, 1);
    shards.forEach((shard, i) => {
      const a = featureMatrix(shard);
      const share = weights[i] / shard.sampleCount;
      normal = normal.add(a.transpose().mmul(a).mul(share));
      rhs = rhs.add(
        a
          .transpose()
          .mmul(Matrix.columnVector(Array.from(shard.targets)))
          .mul(share),
      );
    });
    const reference = new CholeskyDecomposition(normal).solve(rhs);
    let referenceLoss = (lambda / 2) * reference.dot(reference);
    shards.forEach((shard, i) => {
      const residual = featureMatrix(shard)
        .mmul(reference)
        .sub(Matrix.columnVector(Array.from(shard.targets)));
      referenceLoss += (weights[i] * residual.dot(residual)) / (2 * shard.sampleCount);
    });

    const optimum = solveOptimum(global);
    expect(relativeError(optimum.x, reference.getColumn(0))).toBeLessThan(1e-9);
    expect(Math.abs(optimum.loss - referenceLoss) / referenceLoss).toBeLessThan(1e-9);
    expect(optimum.gradientNorm).toBeLessThanOrEqual(1e-10);
  });

  it('certifies the logistic optimum of 20 clients to ||grad f|| <= 1e-10, and the certificate is honest', () => {
    const lambda = 1e-3;
    const { shards, weights } = federatedShards(2, 6, 'binary');
    const global = new WeightedSumObjective(
      shards.map((shard) => new LogisticObjective(shard, lambda)),
      weights,
    );
    const optimum = solveOptimum(global);
    expect(optimum.gradientNorm).toBeLessThanOrEqual(1e-10);
    const recomputed = norm(independentGradient(shards, weights, lambda, null, optimum.x));
    expect(recomputed).toBeLessThanOrEqual(1e-10);
    expect(Math.abs(recomputed - optimum.gradientNorm)).toBeLessThan(1e-13);
    expect(optimum.loss).toBe(global.loss(optimum.x));
  });

  it('certifies the softmax optimum of 20 clients to ||grad f|| <= 1e-10, and the certificate is honest', () => {
    const lambda = 1e-3;
    const classes = 3;
    const { shards, weights } = federatedShards(3, 4, classes);
    const global = new WeightedSumObjective(
      shards.map((shard) => new SoftmaxObjective(shard, lambda, classes)),
      weights,
    );
    const optimum = solveOptimum(global);
    expect(optimum.gradientNorm).toBeLessThanOrEqual(1e-10);
    const recomputed = norm(independentGradient(shards, weights, lambda, classes, optimum.x));
    expect(recomputed).toBeLessThanOrEqual(1e-10);
    expect(Math.abs(recomputed - optimum.gradientNorm)).toBeLessThan(1e-13);
  });

  it('certifies a softmax problem with lambda = 0, whose Hessian is singular along the class shifts', () => {
    const { shards, weights } = federatedShards(4, 3, 3);
    const global = new WeightedSumObjective(
      shards.map((shard) => new SoftmaxObjective(shard, 0, 3)),
      weights,
    );
    const optimum = solveOptimum(global);
    expect(norm(independentGradient(shards, weights, 0, 3, optimum.x))).toBeLessThanOrEqual(1e-10);
  });

  it('says which gradient norm it reached when it cannot certify within its cap', () => {
    const { shards, weights } = federatedShards(5, 6, 'binary');
    const global = new WeightedSumObjective(
      shards.map((shard) => new LogisticObjective(shard, 1e-3)),
      weights,
    );
    expect(errorCode(() => solveOptimum(global, { iterationsMax: 1 }))).toBe(
      'E_PROBLEM_NOT_CERTIFIED',
    );
    expect(() => solveOptimum(global, { iterationsMax: 1 })).toThrow(
      /reached \|\|grad f\|\| = \d\.\d{3}e-?\d+ after 1 iterations/,
    );
  });

  it('refuses least squares without a unique minimizer (lambda = 0, fewer samples than features)', () => {
    const shard = gaussianShard(Rng.fromSeed(6), 0, 3, 8, 'real');
    expect(errorCode(() => solveOptimum(new LeastSquaresObjective(shard, 0)))).toBe(
      'E_LINALG_NOT_POSITIVE_DEFINITE',
    );
  });
});
