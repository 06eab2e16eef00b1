import { describe, expect, it } from 'vitest';
import { Rng } from '../../src/base/rng.js';
import { createObjective } from '../../src/problem/create-objective.js';
import { LeastSquaresObjective } from '../../src/problem/least-squares.js';
import { LogisticObjective } from '../../src/problem/logistic.js';
import { SoftmaxObjective } from '../../src/problem/softmax.js';
import { errorCode, gaussianShard } from './fixtures.js';

describe('createObjective', () => {
  it('builds the objective of each kind with the shard, lambda and, for softmax, C x p parameters', () => {
    const rng = Rng.fromSeed(1);
    const real = gaussianShard(rng, 0, 10, 4, 'real');
    const binary = gaussianShard(rng, 1, 10, 4, 'binary');
    const labelled = gaussianShard(rng, 2, 10, 4, 3);
    const ls = createObjective({ kind: 'least-squares', regularization: 0.1 }, real);
    const logistic = createObjective({ kind: 'logistic', regularization: 0.2 }, binary);
    const softmax = createObjective({ kind: 'softmax', regularization: 0.3, classes: 3 }, labelled);
    expect(ls).toBeInstanceOf(LeastSquaresObjective);
    expect(logistic).toBeInstanceOf(LogisticObjective);
    expect(softmax).toBeInstanceOf(SoftmaxObjective);
    expect([ls.dim, logistic.dim, softmax.dim]).toEqual([4, 4, 12]);
    expect([ls.regularization, logistic.regularization, softmax.regularization]).toEqual([
      0.1, 0.2, 0.3,
    ]);
    expect(softmax.sampleCount).toBe(10);
  });

  it('needs a class count for softmax', () => {
    const shard = gaussianShard(Rng.fromSeed(2), 0, 10, 4, 3);
    expect(errorCode(() => createObjective({ kind: 'softmax', regularization: 0.1 }, shard))).toBe(
      'E_PROBLEM_SPEC',
    );
  });
});
