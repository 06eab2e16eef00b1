// The closed-form floor of minibatch gradient descent, checked against its definition: on shards
// small enough to list every batch, the second moment's recursion P+ = E_B[A_B P A_B^T] +
// gamma^2 E_B[g_B g_B^T] is iterated with the expectations taken over every batch (uniform
// without replacement: every subset of size b equally likely), until it settles. That uses none
// of the finite-population algebra the closed form rests on.

import { describe, expect, it } from 'vitest';
import {
  batchCovarianceFactor,
  minibatchGdFloor,
  MINIBATCH_FLOOR_DIMENSION_MAX,
  type MinibatchShard,
} from '../../src/theory/minibatch-lyapunov.js';
import { Rng } from '../../src/base/rng.js';
import { TheoryError } from '../../src/theory/theory-error.js';
import { codeOf } from '../support/error-code.js';

const D = 2;

function subsets(n: number, b: number): number[][] {
  if (b === 0) return [[]];
  if (n < b) return [];
  const withLast = subsets(n - 1, b - 1).map((s) => [...s, n - 1]);
  return [...subsets(n - 1, b), ...withLast];
}

function randomShard(rng: Rng, n: number, b: number, weight: number): MinibatchShard {
  const features = new Float64Array(n * D);
  const targets = new Float64Array(n);
  for (let k = 0; k < features.length; k++) features[k] = rng.normal();
  for (let s = 0; s < n; s++) targets[s] = rng.normal();
  return { features, targets, sampleCount: n, batchSize: b, weight };
}

/** x* of sum_i p_i f_i by the normal equations (2 x 2, Cramer's rule). */
function optimumOf(shards: MinibatchShard[], lambda: number): Float64Array {
  const h = [0, 0, 0, 0];
  const g = [0, 0];
  for (const shard of shards) {
    for (let s = 0; s < shard.sampleCount; s++) {
      const a = shard.features.subarray(s * D, s * D + D);
      const w = shard.weight / shard.sampleCount;
      for (let j = 0; j < D; j++) {
        g[j] += w * a[j] * shard.targets[s];
        for (let k = 0; k < D; k++) h[j * D + k] += w * a[j] * a[k];
      }
    }
  }
  h[0] += lambda;
  h[3] += lambda;
  const det = h[0] * h[3] - h[1] * h[2];
  return Float64Array.from([(h[3] * g[0] - h[1] * g[1]) / det, (h[0] * g[1] - h[2] * g[0]) / det]);
}

/** One client's batch Hessian and batch gradient at x*, for one listed batch. */
function batchTerms(shard: MinibatchShard, batch: number[], lambda: number, x: Float64Array) {
  const h = [lambda, 0, 0, lambda];
  const g = [lambda * x[0], lambda * x[1]];
  for (const s of batch) {
    const a = shard.features.subarray(s * D, s * D + D);
    const r = a[0] * x[0] + a[1] * x[1] - shard.targets[s];
    for (let j = 0; j < D; j++) {
      g[j] += (a[j] * r) / batch.length;
      for (let k = 0; k < D; k++) h[j * D + k] += (a[j] * a[k]) / batch.length;
    }
  }
  return { h, g };
}

/** The stationary E[f - f*] by iterating the recursion over every joint batch (two clients). */
function enumeratedFloor(shards: MinibatchShard[], lambda: number, gamma: number): number {
  const x = optimumOf(shards, lambda);
  const terms = shards.map((shard) =>
    subsets(shard.sampleCount, shard.batchSize).map((batch) => batchTerms(shard, batch, lambda, x)),
  );
  const joint: { a: number[]; g: number[]; probability: number }[] = [];
  for (const t0 of terms[0])
    for (const t1 of terms[1]) {
      const h = t0.h.map((v, k) => shards[0].weight * v + shards[1].weight * t1.h[k]);
      const g = t0.g.map((v, k) => shards[0].weight * v + shards[1].weight * t1.g[k]);
      const a = [1 - gamma * h[0], -gamma * h[1], -gamma * h[2], 1 - gamma * h[3]];
      joint.push({ a, g, probability: 1 / (terms[0].length * terms[1].length) });
    }
  let p = [0, 0, 0, 0];
  for (let iteration = 0; iteration < 20_000; iteration++) {
    const next = [0, 0, 0, 0];
    for (const { a, g, probability } of joint) {
      for (let j = 0; j < D; j++)
        for (let k = 0; k < D; k++) {
          let apa = 0;
          for (let l = 0; l < D; l++)
            for (let m = 0; m < D; m++) apa += a[j * D + l] * p[l * D + m] * a[k * D + m];
          next[j * D + k] += probability * (apa + gamma * gamma * g[j] * g[k]);
        }
    }
    p = next;
  }
  const hGlobal = [0, 0, 0, 0];
  for (const { a, probability } of joint)
    for (let k = 0; k < 4; k++)
      hGlobal[k] += (probability * ((k === 0 || k === 3 ? 1 : 0) - a[k])) / gamma;
  let trace = 0;
  for (let j = 0; j < D; j++)
    for (let k = 0; k < D; k++) trace += hGlobal[j * D + k] * p[k * D + j];
  return trace / 2;
}

describe('the finite-population factor', () => {
  it('is the variance of a batch mean over every listed batch (n = 6, b = 1..6)', () => {
    const y = [0.3, -1.2, 2.5, 0.7, -0.4, 1.9];
    const n = y.length;
    const mean = y.reduce((s, v) => s + v, 0) / n;
    const spread = y.reduce((s, v) => s + (v - mean) ** 2, 0);
    for (let b = 1; b <= n; b++) {
      const batches = subsets(n, b);
      const means = batches.map((batch) => batch.reduce((s, i) => s + y[i], 0) / b);
      const variance = means.reduce((s, m) => s + (m - mean) ** 2, 0) / batches.length;
      // c (sum_s y_s^2 - n ybar^2) = c sum_s (y_s - ybar)^2
      expect(batchCovarianceFactor(n, b) * spread).toBeCloseTo(variance, 14);
    }
  });
});

describe('minibatchGdFloor', () => {
  const lambda = 0.05;
  const rng = Rng.derive(41, 'minibatch-lyapunov-test');
  const shards = [randomShard(rng, 5, 2, 0.4), randomShard(rng, 4, 3, 0.6)];

  it('equals the second-moment recursion iterated over every batch (two clients, d = 2)', () => {
    const x = optimumOf(shards, lambda);
    const gamma = 0.3;
    const closed = minibatchGdFloor({
      dim: D,
      shards,
      regularization: lambda,
      optimum: x,
      stepSize: gamma,
    });
    const enumerated = enumeratedFloor(shards, lambda, gamma);
    expect(enumerated).toBeGreaterThan(0);
    // Both are exact; they part by rounding only (common practice: 1e-10 relative).
    expect(Math.abs(closed.floor - enumerated)).toBeLessThan(1e-10 * enumerated);
  });

  it('is zero when every batch is the whole shard (full gradients reach x*)', () => {
    const full = shards.map((s) => ({ ...s, batchSize: s.sampleCount }));
    const x = optimumOf(full, lambda);
    const closed = minibatchGdFloor({
      dim: D,
      shards: full,
      regularization: lambda,
      optimum: x,
      stepSize: 0.3,
    });
    expect(closed.floor).toBe(0);
  });

  it('refuses a step size past mean-square stability, and a dimension past its limit', () => {
    const x = optimumOf(shards, lambda);
    expect(
      codeOf(
        () =>
          minibatchGdFloor({ dim: D, shards, regularization: lambda, optimum: x, stepSize: 50 }),
        TheoryError,
      ),
    ).toBe('E_THEORY_SINGULAR');
    const d = MINIBATCH_FLOOR_DIMENSION_MAX + 1;
    const wide: MinibatchShard = {
      features: new Float64Array(2 * d),
      targets: new Float64Array(2),
      sampleCount: 2,
      batchSize: 1,
      weight: 1,
    };
    expect(
      codeOf(
        () =>
          minibatchGdFloor({
            dim: d,
            shards: [wide],
            regularization: 0,
            optimum: new Float64Array(d),
            stepSize: 0.1,
          }),
        TheoryError,
      ),
    ).toBe('E_THEORY_SIZE_LIMIT');
  });
});
