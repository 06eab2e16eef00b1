// A client's own minimizer through its structure: the n-dimensional dual when n < p.
import { CholeskyDecomposition, Matrix } from 'ml-matrix';
import { describe, expect, it } from 'vitest';
import { Rng } from '../../src/base/rng.js';
import { LeastSquaresObjective } from '../../src/problem/least-squares.js';
import { LogisticObjective } from '../../src/problem/logistic.js';
import { ownMinimizer } from '../../src/theory/own-minimizer.js';
import { solveOptimum } from '../../src/theory/oracle.js';
import { featureMatrix, gaussianShard, relativeError } from '../problem/fixtures.js';

/** (A^T A / n + lambda I)^{-1} A^T b / n by ml-matrix's Cholesky on the p x p system. */
function primalReference(shard: ReturnType<typeof gaussianShard>, lambda: number): number[] {
  const a = featureMatrix(shard);
  const n = shard.sampleCount;
  const hessian = a.transpose().mmul(a).div(n).add(Matrix.eye(shard.featureCount).mul(lambda));
  const rhs = a
    .transpose()
    .mmul(Matrix.columnVector(Array.from(shard.targets)))
    .div(n);
  return new CholeskyDecomposition(hessian).solve(rhs).getColumn(0);
}

describe('ownMinimizer', () => {
  // n = 20 (dense dual) and n = 90 (CG on the dual), both below p = 150.
  for (const n of [20, 90]) {
    it(`solves least squares with n = ${n} < p in the dual, as ml-matrix solves the primal (1e-9)`, () => {
      const rng = Rng.fromSeed(31 + n);
      const lambda = 1e-2;
      const shard = gaussianShard(rng, 0, n, 150, 'real', 1, 0.3);
      const client = new LeastSquaresObjective(shard, lambda);
      const x = ownMinimizer(client);
      expect(x).not.toBeNull();
      expect(relativeError(x!, primalReference(shard, lambda))).toBeLessThan(1e-9);
      const gradient = new Float64Array(150);
      client.gradient(x!, gradient);
      expect(Math.hypot(...gradient)).toBeLessThanOrEqual(1e-10);
    });
  }

  it('gives null without strong convexity (lambda = 0, n < p): x_i* is not unique', () => {
    const shard = gaussianShard(Rng.fromSeed(33), 0, 20, 150, 'real');
    expect(ownMinimizer(new LeastSquaresObjective(shard, 0))).toBeNull();
  });

  it('solves a logistic client as the oracle solves any objective', () => {
    const shard = gaussianShard(Rng.fromSeed(34), 0, 80, 40, 'binary');
    const client = new LogisticObjective(shard, 1e-2);
    expect(Array.from(ownMinimizer(client)!)).toEqual(Array.from(solveOptimum(client).x));
  });
});
