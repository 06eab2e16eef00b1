// Against a reference (a perceptron, which has no x*), an evaluation reports the gap to the
// reference loss as it is, negative below it, and no distance; the explosion bound then takes
// its scale from the start alone.
import { describe, expect, it } from 'vitest';
import { Rng } from '../../src/base/rng.js';
import { evaluateModel } from '../../src/engine/evaluate.js';
import { EXPLOSION_FACTOR, explosionBound, normWithin } from '../../src/engine/explosion-bound.js';
import { PerceptronObjective } from '../../src/problem/perceptron.js';
import { gaussianShard, randomVector } from '../problem/fixtures.js';

function perceptron() {
  const rng = Rng.fromSeed(21);
  const shard = gaussianShard(rng, 0, 20, 3, 3);
  const objective = new PerceptronObjective(shard, 0.01, {
    hiddenWidths: [4],
    activation: 'softplus',
    classCount: 3,
  });
  return { rng, objective };
}

describe('evaluateModel against a reference', () => {
  it('reports a negative gap unclamped and no distance', () => {
    const { rng, objective } = perceptron();
    const x = randomVector(rng, objective.dim, 0.5);
    const loss = objective.loss(x);
    const reference = randomVector(rng, objective.dim);
    const below = evaluateModel(objective, reference, loss + 0.25, x);
    expect(below.suboptimality).toBe(loss - (loss + 0.25));
    expect(below.suboptimality).toBeLessThan(0);
    expect(Number.isNaN(below.distance)).toBe(true);
  });

  it('gives an explosion bound from ||x_0|| alone when there is no distance', () => {
    const { rng, objective } = perceptron();
    const x0 = randomVector(rng, objective.dim, 10);
    const evaluation = evaluateModel(objective, x0, objective.loss(x0), x0);
    const bound = explosionBound(x0, evaluation);
    const norm = Math.sqrt(x0.reduce((sum, v) => sum + v * v, 0));
    // Two summation orders of ||x_0||: equal to a few ulps (common practice).
    expect(Math.abs(bound.normMax / (EXPLOSION_FACTOR * norm) - 1)).toBeLessThan(1e-12);
    expect(normWithin(x0, bound)).toBe(true);
  });
});
