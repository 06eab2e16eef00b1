// The objectives' gradients and Hessian-vector products on the row kernels, against the plain
// per-sample loops they replaced (left-to-right dot products), at shapes around the kernels'
// block of 8 entries: fewer features than a block, odd counts, ragged tails.
//
// The kernels sum each dot product a_s . x in another order than the plain loop, so the last bits
// of every score move; the sums over samples are in the same order in both. Per component j the
// two results differ by at most about
//   sum_s |delta w_s| |a_sj| + (both accumulations' rounding),
// where |delta w_s| <= 2 gamma_d sum_k |a_sk x_k| (Higham, Accuracy and Stability of Numerical
// Algorithms, 2nd ed., eq. (3.5), for each order), times the weight's slope in the score (1 for
// least squares, <= 1/4 for the sigmoid, <= 1 per class for softmax probabilities), and each
// accumulation is within gamma_n sum_s |w_s a_sj|. The test allows four times the sum of these,
// with gamma_m = m u / (1 - m u), u = 2^-53.
import { describe, expect, it } from 'vitest';
import { Rng } from '../../src/base/rng.js';
import { createObjective } from '../../src/problem/create-objective.js';
import type { ProblemKind } from '../../src/problem/objective.js';
import { sigmoid } from '../../src/problem/logistic.js';
import { gaussianShard, randomVector } from './fixtures.js';

const UNIT_ROUNDOFF = 2 ** -53;
const gamma = (m: number) => (m * UNIT_ROUNDOFF) / (1 - m * UNIT_ROUNDOFF);
const CLASSES = 3;
const LAMBDA = 0.01;

const SHAPES: [samples: number, features: number][] = [
  [1, 1],
  [5, 3],
  [9, 7],
  [4, 8],
  [6, 9],
  [3, 17],
  [40, 33],
];

/** Plain loops of the per-sample sums, with the componentwise bound described above. */
function plainGradient(
  kind: ProblemKind,
  features: Float64Array,
  targets: Float64Array,
  n: number,
  p: number,
  x: Float64Array,
): { gradient: Float64Array; tolerance: Float64Array } {
  const classes = kind === 'softmax' ? CLASSES : 1;
  const gradient = new Float64Array(classes * p);
  const magnitude = new Float64Array(classes * p);
  for (let s = 0; s < n; s++) {
    const row = features.subarray(s * p, (s + 1) * p);
    const scores: number[] = [];
    let scoreSize = 0;
    for (let c = 0; c < classes; c++) {
      let z = 0;
      let size = 0;
      for (let j = 0; j < p; j++) {
        z += row[j] * x[c * p + j];
        size += Math.abs(row[j] * x[c * p + j]);
      }
      scores.push(z);
      scoreSize = Math.max(scoreSize, size);
    }
    let weights: number[];
    if (kind === 'least-squares') weights = [scores[0] - targets[s]];
    else if (kind === 'logistic') weights = [sigmoid(scores[0]) - targets[s]];
    else {
      const largest = Math.max(...scores);
      const e = scores.map((z) => Math.exp(z - largest));
      const total = e.reduce((a, b) => a + b, 0);
      weights = e.map((v, c) => v / total - (c === targets[s] ? 1 : 0));
    }
    for (let c = 0; c < classes; c++) {
      for (let j = 0; j < p; j++) {
        gradient[c * p + j] += weights[c] * row[j];
        const perturbation = 2 * gamma(p) * scoreSize * classes;
        magnitude[c * p + j] +=
          (perturbation + gamma(n) * Math.abs(weights[c])) * Math.abs(row[j]) +
          UNIT_ROUNDOFF * Math.abs(weights[c] * row[j]);
      }
    }
  }
  for (let j = 0; j < gradient.length; j++) {
    gradient[j] = gradient[j] / n + LAMBDA * x[j];
    magnitude[j] = (4 * magnitude[j]) / n + UNIT_ROUNDOFF * Math.abs(gradient[j]);
  }
  return { gradient, tolerance: magnitude };
}

describe.each(['least-squares', 'logistic', 'softmax'] as const)(
  '%s on the row kernels',
  (kind) => {
    const rng = Rng.derive(17, 'test', 'objective-kernels', kind);
    const targetKind = kind === 'least-squares' ? 'real' : kind === 'logistic' ? 'binary' : CLASSES;

    it('agrees with the plain per-sample loop within the summation bound at every shape', () => {
      for (const [n, p] of SHAPES) {
        const shard = gaussianShard(rng, 0, n, p, targetKind);
        const objective = createObjective(
          { kind, regularization: LAMBDA, classes: CLASSES },
          shard,
        );
        const x = randomVector(rng, objective.dim);
        const gradient = new Float64Array(objective.dim);
        objective.gradient(x, gradient);
        const plain = plainGradient(kind, shard.features, shard.targets, n, p, x);
        for (let j = 0; j < objective.dim; j++) {
          expect(Math.abs(gradient[j] - plain.gradient[j])).toBeLessThanOrEqual(plain.tolerance[j]);
        }
      }
    });

    it('gives the full gradient bit for bit from a sorted minibatch of every index, at every shape', () => {
      for (const [n, p] of SHAPES) {
        const shard = gaussianShard(rng, 0, n, p, targetKind);
        const objective = createObjective(
          { kind, regularization: LAMBDA, classes: CLASSES },
          shard,
        );
        const x = randomVector(rng, objective.dim);
        const full = new Float64Array(objective.dim);
        const batch = new Float64Array(objective.dim);
        objective.gradient(x, full);
        objective.minibatchGradient(
          x,
          Uint32Array.from({ length: n }, (_, s) => s),
          batch,
        );
        for (let j = 0; j < objective.dim; j++) expect(Object.is(batch[j], full[j])).toBe(true);
      }
    });

    it('repeats its results bit for bit, and its Hessian operator gives hessianVector bit for bit', () => {
      const [n, p] = [11, 13];
      const shard = gaussianShard(rng, 0, n, p, targetKind);
      const spec = { kind, regularization: LAMBDA, classes: CLASSES };
      const objective = createObjective(spec, shard);
      const twin = createObjective(spec, shard);
      const x = randomVector(rng, objective.dim);
      const v = randomVector(rng, objective.dim);
      const [first, second, product, applied] = [0, 1, 2, 3].map(
        () => new Float64Array(objective.dim),
      );
      objective.gradient(x, first);
      twin.gradient(x, second);
      objective.hessianVector(x, v, product);
      objective.hessianOperator!(x)(v, applied);
      for (let j = 0; j < objective.dim; j++) {
        expect(Object.is(first[j], second[j])).toBe(true);
        expect(Object.is(product[j], applied[j])).toBe(true);
      }
    });
  },
);
