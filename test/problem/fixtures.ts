// Seeded test data and independent numerical references shared by the objective and oracle tests.

import { CodedError } from '../../src/base/coded-error.js';
import { EigenvalueDecomposition, Matrix } from 'ml-matrix';
import type { Shard } from '../../src/problem/shard.js';
import { Rng } from '../../src/base/rng.js';
import type { Objective } from '../../src/problem/objective.js';

/** 'real': targets a.w + noise; 'binary': 0/1 labels from a noisy logistic model; a number C: class indices. */
export type TargetKind = 'real' | 'binary' | number;

/**
 * A shard of standard normal features (times featureScale, plus a client-specific mean shift) and
 * targets from a random linear model, so that clients differ the way the scenarios make them differ.
 */
export function gaussianShard(
  rng: Rng,
  clientId: number,
  sampleCount: number,
  featureCount: number,
  targets: TargetKind,
  featureScale = 1,
  meanShift = 0,
): Shard {
  const features = new Float64Array(sampleCount * featureCount);
  const shift = Float64Array.from({ length: featureCount }, () => meanShift * rng.normal());
  for (let s = 0; s < sampleCount; s++) {
    for (let j = 0; j < featureCount; j++)
      features[s * featureCount + j] = featureScale * rng.normal() + shift[j];
  }
  const classCount = typeof targets === 'number' ? targets : 1;
  const model = Float64Array.from({ length: classCount * featureCount }, () => rng.normal());
  const values = new Float64Array(sampleCount);
  for (let s = 0; s < sampleCount; s++) {
    const row = features.subarray(s * featureCount, (s + 1) * featureCount);
    const score = (c: number) => {
      let z = 0;
      for (let j = 0; j < featureCount; j++) z += model[c * featureCount + j] * row[j];
      return z + rng.normal();
    };
    if (targets === 'real') values[s] = score(0);
    else if (targets === 'binary') values[s] = score(0) > 0 ? 1 : 0;
    else {
      let best = 0;
      let bestScore = -Infinity;
      for (let c = 0; c < classCount; c++) {
        const z = score(c);
        if (z > bestScore) {
          bestScore = z;
          best = c;
        }
      }
      values[s] = best;
    }
  }
  return { clientId, sampleCount, featureCount, features, targets: values };
}

export function randomVector(rng: Rng, dim: number, scale = 1): Float64Array {
  return Float64Array.from({ length: dim }, () => scale * rng.normal());
}

/** ||a - b|| / ||b|| (||a - b|| when b = 0). */
export function relativeError(a: ArrayLike<number>, b: ArrayLike<number>): number {
  let diff = 0;
  let ref = 0;
  for (let j = 0; j < b.length; j++) {
    diff += (a[j] - b[j]) ** 2;
    ref += b[j] ** 2;
  }
  return ref === 0 ? Math.sqrt(diff) : Math.sqrt(diff / ref);
}

/** The gradient by central differences (f(x + h e_j) - f(x - h e_j)) / 2h, error O(h^2). */
export function centralDifferenceGradient(
  objective: Objective,
  x: Float64Array,
  h: number,
): Float64Array {
  const out = new Float64Array(x.length);
  const probe = Float64Array.from(x);
  for (let j = 0; j < x.length; j++) {
    probe[j] = x[j] + h;
    const up = objective.loss(probe);
    probe[j] = x[j] - h;
    const down = objective.loss(probe);
    probe[j] = x[j];
    out[j] = (up - down) / (2 * h);
  }
  return out;
}

/** H v by central differences of the gradient along v. */
export function centralDifferenceHessianVector(
  objective: Objective,
  x: Float64Array,
  v: Float64Array,
  h: number,
): Float64Array {
  const up = Float64Array.from(x);
  const down = Float64Array.from(x);
  for (let j = 0; j < x.length; j++) {
    up[j] += h * v[j];
    down[j] -= h * v[j];
  }
  const gradientUp = new Float64Array(x.length);
  const gradientDown = new Float64Array(x.length);
  objective.gradient(up, gradientUp);
  objective.gradient(down, gradientDown);
  return gradientUp.map((g, j) => (g - gradientDown[j]) / (2 * h));
}

/** The shard's feature matrix as an ml-matrix Matrix (n x p). */
export function featureMatrix(shard: Shard): Matrix {
  const rows: number[][] = [];
  for (let s = 0; s < shard.sampleCount; s++) {
    rows.push(
      Array.from(shard.features.subarray(s * shard.featureCount, (s + 1) * shard.featureCount)),
    );
  }
  return new Matrix(rows);
}

/** The dense Hessian of `objective` at x from products with unit vectors, as an ml-matrix Matrix. */
export function hessianMatrix(objective: Objective, x: Float64Array): Matrix {
  const n = objective.dim;
  const h = new Matrix(n, n);
  const unit = new Float64Array(n);
  const column = new Float64Array(n);
  for (let j = 0; j < n; j++) {
    unit[j] = 1;
    objective.hessianVector(x, unit, column);
    unit[j] = 0;
    for (let i = 0; i < n; i++) h.set(i, j, column[i]);
  }
  return h;
}

/** Smallest and largest eigenvalue of a symmetric Matrix by ml-matrix's EigenvalueDecomposition. */
export function symmetricExtremes(m: Matrix): { smallest: number; largest: number } {
  const values = new EigenvalueDecomposition(m, { assumeSymmetric: true }).realEigenvalues;
  return { smallest: Math.min(...values), largest: Math.max(...values) };
}

/** The code of the ProblemError that `fn` throws, 'other' for another error, 'none' if it returns. */
export function errorCode(fn: () => unknown): string {
  try {
    fn();
  } catch (error) {
    return error instanceof CodedError ? error.code : 'other';
  }
  return 'none';
}
