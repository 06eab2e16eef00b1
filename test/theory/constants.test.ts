import { CholeskyDecomposition, Matrix } from 'ml-matrix';
import { describe, expect, it } from 'vitest';
import type { Shard } from '../../src/problem/shard.js';
import { Rng } from '../../src/base/rng.js';
import { LeastSquaresObjective } from '../../src/problem/least-squares.js';
import { LogisticObjective } from '../../src/problem/logistic.js';
import { WeightedSumObjective } from '../../src/problem/weighted-sum.js';
import { computeConstants } from '../../src/theory/constants.js';
import { solveOptimum } from '../../src/theory/oracle.js';
import { featureMatrix, gaussianShard, symmetricExtremes } from '../problem/fixtures.js';

const P = 6;

/** The normal equations of sum_i p_i f_i for least squares, assembled with ml-matrix. */
function normalEquations(
  shards: Shard[],
  weights: number[],
  lambda: number,
): { hessian: Matrix; rhs: Matrix } {
  let hessian = Matrix.eye(P).mul(lambda);
  let rhs = Matrix.zeros(P, 1);
  shards.forEach((shard, i) => {
    const a = featureMatrix(shard);
    const share = weights[i] / shard.sampleCount;
    hessian = hessian.add(a.transpose().mmul(a).mul(share));
    rhs = rhs.add(
      a
        .transpose()
        .mmul(Matrix.columnVector(Array.from(shard.targets)))
        .mul(share),
    );
  });
  return { hessian, rhs };
}

const relative = (a: number, b: number) => Math.abs(a - b) / Math.abs(b);

describe('computeConstants', () => {
  it('gives exact L, mu, heterogeneity and minimizer distances for least squares (reference: ml-matrix)', () => {
    const rng = Rng.fromSeed(1);
    const lambda = 1e-2;
    const shards = [20, 35, 14].map((n, i) => gaussianShard(rng, i, n, P, 'real', 1 + i, 1.5));
    const weights = [0.3, 0.5, 0.2];
    const clients = shards.map((shard) => new LeastSquaresObjective(shard, lambda));
    const optimum = solveOptimum(new WeightedSumObjective(clients, weights));
    const constants = computeConstants(clients, weights, optimum.x);

    const global = normalEquations(shards, weights, lambda);
    const extremes = symmetricExtremes(global.hessian);
    expect(relative(constants.smoothness, extremes.largest)).toBeLessThan(1e-9);
    expect(relative(constants.strongConvexity, extremes.smallest)).toBeLessThan(1e-9);
    expect(relative(constants.conditionNumber, extremes.largest / extremes.smallest)).toBeLessThan(
      1e-9,
    );
    expect(relative(constants.hessianAtOptimum.largest, extremes.largest)).toBeLessThan(1e-9);
    expect(relative(constants.hessianAtOptimum.smallest, extremes.smallest)).toBeLessThan(1e-9);

    // x* from ml-matrix; grad f_i(x*) = H_i x* - r_i per client; x_i* = H_i^{-1} r_i.
    const xStar = new CholeskyDecomposition(global.hessian).solve(global.rhs);
    let heterogeneity = 0;
    shards.forEach((shard, i) => {
      const own = normalEquations([shard], [1], lambda);
      const gradient = own.hessian.mmul(xStar).sub(own.rhs);
      heterogeneity += weights[i] * gradient.dot(gradient);
      const ownMinimizer = new CholeskyDecomposition(own.hessian).solve(own.rhs);
      const client = constants.clients[i];
      expect(
        relative(client.gradientNormAtOptimum, Math.sqrt(gradient.dot(gradient))),
      ).toBeLessThan(1e-9);
      expect(
        relative(client.minimizerDistance ?? Number.NaN, ownMinimizer.sub(xStar).norm()),
      ).toBeLessThan(1e-9);
      const ownExtremes = symmetricExtremes(own.hessian);
      expect(relative(client.smoothness, ownExtremes.largest)).toBeLessThan(1e-9);
      expect(relative(client.strongConvexity, ownExtremes.smallest)).toBeLessThan(1e-9);
    });
    expect(relative(constants.heterogeneity, heterogeneity)).toBeLessThan(1e-9);
  });

  it('reports no minimizer distance for a client that is not strongly convex (lambda = 0, n_i < p)', () => {
    const rng = Rng.fromSeed(2);
    const shards = [30, 3, 25].map((n, i) => gaussianShard(rng, i, n, P, 'real'));
    const clients = shards.map((shard) => new LeastSquaresObjective(shard, 0));
    const weights = [0.45, 0.05, 0.5];
    const optimum = solveOptimum(new WeightedSumObjective(clients, weights));
    const constants = computeConstants(clients, weights, optimum.x);
    expect(constants.clients[1].strongConvexity).toBe(0);
    expect(constants.clients[1].minimizerDistance).toBeNull();
    expect(constants.clients[0].minimizerDistance).toBeGreaterThan(0);
    expect(constants.clients[2].minimizerDistance).toBeGreaterThan(0);
  });

  it('finds no heterogeneity among identical clients: x* minimizes each f_i (definition)', () => {
    const shard = gaussianShard(Rng.fromSeed(3), 0, 40, P, 'binary', 1, 0.5);
    const clients = [0, 1, 2].map(() => new LogisticObjective(shard, 1e-2));
    const weights = [0.2, 0.3, 0.5];
    const optimum = solveOptimum(new WeightedSumObjective(clients, weights));
    const constants = computeConstants(clients, weights, optimum.x);
    expect(constants.heterogeneity).toBeLessThan(1e-20);
    for (const client of constants.clients) expect(client.minimizerDistance).toBeLessThan(1e-9);
  });

  it('brackets the logistic Hessian at x* between the curvature bounds', () => {
    const rng = Rng.fromSeed(4);
    const lambda = 1e-3;
    const clients = Array.from(
      { length: 5 },
      (_, i) => new LogisticObjective(gaussianShard(rng, i, 30, P, 'binary', 1, 1), lambda),
    );
    const weights = [0.1, 0.2, 0.3, 0.2, 0.2];
    const optimum = solveOptimum(new WeightedSumObjective(clients, weights));
    const constants = computeConstants(clients, weights, optimum.x);
    expect(constants.strongConvexity).toBeCloseTo(lambda, 15);
    expect(constants.hessianAtOptimum.smallest).toBeGreaterThanOrEqual(constants.strongConvexity);
    expect(constants.hessianAtOptimum.largest).toBeLessThanOrEqual(constants.smoothness);
    expect(constants.conditionNumber).toBeCloseTo(constants.smoothness / lambda, 6);
    expect(constants.heterogeneity).toBeGreaterThan(0);
    for (const client of constants.clients) expect(client.minimizerDistance).toBeGreaterThan(0);
  });
});
