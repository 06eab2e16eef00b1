// The matrix-free oracle (above the dense crossover) against the dense route and ml-matrix.
import { CholeskyDecomposition, Matrix, solve } from 'ml-matrix';
import { describe, expect, it } from 'vitest';
import { Rng } from '../../src/base/rng.js';
import { LeastSquaresObjective } from '../../src/problem/least-squares.js';
import { LogisticObjective } from '../../src/problem/logistic.js';
import { SoftmaxObjective } from '../../src/problem/softmax.js';
import { WeightedSumObjective } from '../../src/problem/weighted-sum.js';
import { DENSE_DIMENSION_FASTER_MAX, solveOptimum } from '../../src/theory/oracle.js';
import { solveByDenseNewton, solveLeastSquaresDense } from '../../src/theory/dense-oracle.js';
import { distanceSquared } from '../../src/vec/kernels.js';
import { errorCode, featureMatrix, gaussianShard, relativeError } from '../problem/fixtures.js';

const P = 48;

describe('the matrix-free oracle', () => {
  it('runs above the dense crossover in these tests', () => {
    expect(P).toBeGreaterThan(DENSE_DIMENSION_FASTER_MAX);
  });

  it('solves least squares by CG as ml-matrix solves the normal equations (Cholesky and LU), and as the dense route does, to 1e-9', () => {
    const rng = Rng.fromSeed(21);
    const lambda = 1e-3;
    const shards = [90, 40, 130].map((n, i) => gaussianShard(rng, i, n, P, 'real', 1 + i, 0.5));
    const weights = [0.3, 0.2, 0.5];
    const global = new WeightedSumObjective(
      shards.map((shard) => new LeastSquaresObjective(shard, lambda)),
      weights,
    );
    let normal = Matrix.eye(P).mul(lambda);
    let rhs = Matrix.zeros(P, 1);
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
    const cholesky = new CholeskyDecomposition(normal).solve(rhs).getColumn(0);
    const lu = solve(normal, rhs).getColumn(0);
    const optimum = solveOptimum(global);
    const dense = solveLeastSquaresDense(global, 1e-10, 100);
    expect(optimum.gradientNorm).toBeLessThanOrEqual(1e-10);
    expect(relativeError(optimum.x, cholesky)).toBeLessThan(1e-9);
    expect(relativeError(optimum.x, lu)).toBeLessThan(1e-9);
    expect(relativeError(optimum.x, dense.x)).toBeLessThan(1e-9);
    expect(Math.abs(optimum.loss - dense.loss) / dense.loss).toBeLessThan(1e-12);
  });

  // Both answers are certified; strong convexity bounds their distance to x*, so to each other:
  // ||x - y|| <= (||grad f(x)|| + ||grad f(y)||) / mu (Nesterov, Introductory Lectures, Thm 2.1.10).
  it('certifies logistic by Newton-CG within the certificate of the dense Newton answer', () => {
    const rng = Rng.fromSeed(22);
    const lambda = 1e-2;
    const global = new WeightedSumObjective(
      [60, 80, 50].map(
        (n, i) => new LogisticObjective(gaussianShard(rng, i, n, P, 'binary'), lambda),
      ),
      [0.3, 0.4, 0.3],
    );
    const optimum = solveOptimum(global);
    const dense = solveByDenseNewton(global, 1e-10, 100);
    expect(optimum.gradientNorm).toBeLessThanOrEqual(1e-10);
    expect(Math.sqrt(distanceSquared(optimum.x, dense.x))).toBeLessThanOrEqual(
      (optimum.gradientNorm + dense.gradientNorm) / lambda,
    );
    expect(optimum.loss).toBe(global.loss(optimum.x));
  });

  it('certifies softmax (3 classes x 16 features) by Newton-CG, also with lambda = 0 (flat class shifts)', () => {
    for (const lambda of [1e-2, 0]) {
      const rng = Rng.fromSeed(23);
      const global = new WeightedSumObjective(
        [70, 90].map((n, i) => new SoftmaxObjective(gaussianShard(rng, i, n, 16, 3), lambda, 3)),
        [0.5, 0.5],
      );
      expect(global.dim).toBeGreaterThan(DENSE_DIMENSION_FASTER_MAX);
      const optimum = solveOptimum(global);
      expect(optimum.gradientNorm).toBeLessThanOrEqual(1e-10);
      if (lambda > 0) {
        const dense = solveByDenseNewton(global, 1e-10, 100);
        expect(Math.sqrt(distanceSquared(optimum.x, dense.x))).toBeLessThanOrEqual(
          (optimum.gradientNorm + dense.gradientNorm) / lambda,
        );
      }
    }
  });

  it('refuses least squares without a unique minimizer, as the dense route does (lambda = 0, n < p)', () => {
    const shard = gaussianShard(Rng.fromSeed(24), 0, 10, P, 'real');
    expect(errorCode(() => solveOptimum(new LeastSquaresObjective(shard, 0)))).toBe(
      'E_LINALG_NOT_POSITIVE_DEFINITE',
    );
  });
});
