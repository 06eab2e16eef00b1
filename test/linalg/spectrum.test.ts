import { EigenvalueDecomposition, Matrix } from 'ml-matrix';
import { describe, expect, it } from 'vitest';
import { Rng } from '../../src/base/rng.js';
import { LeastSquaresObjective } from '../../src/problem/least-squares.js';
import {
  extremeEigenvalues,
  semidefiniteExtremeEigenvalues,
  tridiagonalEigen,
  type SymmetricOperator,
} from '../../src/linalg/spectrum.js';
import { hessianExtremeEigenvalues } from '../../src/problem/hessian-spectrum.js';
import { errorCode, featureMatrix, gaussianShard, symmetricExtremes } from '../problem/fixtures.js';

function denseOperator(m: Matrix): SymmetricOperator {
  const n = m.rows;
  const a = Float64Array.from(m.to1DArray());
  return (v, out) => {
    for (let i = 0; i < n; i++) {
      let sum = 0;
      for (let j = 0; j < n; j++) sum += a[i * n + j] * v[j];
      out[i] = sum;
    }
  };
}

function randomSymmetric(rng: Rng, n: number): Matrix {
  const b = Matrix.from1DArray(
    n,
    n,
    Array.from({ length: n * n }, () => rng.normal()),
  );
  return b.add(b.transpose()).div(2);
}

const relative = (a: number, b: number) => Math.abs(a - b) / Math.abs(b);

describe('tridiagonalEigen', () => {
  it('gives the eigenvalues and the last eigenvector components of ml-matrix EigenvalueDecomposition', () => {
    const rng = Rng.fromSeed(1);
    const n = 12;
    const diagonal = Array.from({ length: n }, () => rng.normal());
    const offDiagonal = Array.from({ length: n - 1 }, () => rng.normal());
    const m = new Matrix(n, n);
    for (let i = 0; i < n; i++) m.set(i, i, diagonal[i]);
    for (let i = 0; i < n - 1; i++) {
      m.set(i, i + 1, offDiagonal[i]);
      m.set(i + 1, i, offDiagonal[i]);
    }
    const reference = new EigenvalueDecomposition(m, { assumeSymmetric: true });
    const { values, lastComponents } = tridiagonalEigen(diagonal, offDiagonal);
    const order = Array.from(values.keys()).sort((a, b) => values[a] - values[b]);
    const referenceOrder = Array.from(reference.realEigenvalues.keys()).sort(
      (a, b) => reference.realEigenvalues[a] - reference.realEigenvalues[b],
    );
    const lastRow = reference.eigenvectorMatrix.getRow(n - 1);
    for (let k = 0; k < n; k++) {
      expect(
        Math.abs(values[order[k]] - reference.realEigenvalues[referenceOrder[k]]),
      ).toBeLessThan(1e-12);
      // Eigenvectors are defined up to sign.
      expect(
        Math.abs(Math.abs(lastComponents[order[k]]) - Math.abs(lastRow[referenceOrder[k]])),
      ).toBeLessThan(1e-10);
    }
  });

  it('handles one entry and an already diagonal matrix', () => {
    expect(Array.from(tridiagonalEigen([3], []).values)).toEqual([3]);
    const diagonal = tridiagonalEigen([2, -1, 5], [0, 0]);
    expect(Array.from(diagonal.values)).toEqual([2, -1, 5]);
    expect(Array.from(diagonal.lastComponents)).toEqual([0, 0, 1]);
  });
});

describe('extremeEigenvalues (Lanczos with full reorthogonalization)', () => {
  it('matches ml-matrix EigenvalueDecomposition on random symmetric matrices, definite or not', () => {
    const rng = Rng.fromSeed(2);
    for (const n of [1, 2, 7, 40]) {
      const m = randomSymmetric(rng, n);
      const reference = symmetricExtremes(m);
      const { smallest, largest } = extremeEigenvalues(denseOperator(m), n);
      const scale = Math.max(Math.abs(reference.smallest), Math.abs(reference.largest));
      expect(Math.abs(smallest - reference.smallest) / scale).toBeLessThan(1e-12);
      expect(Math.abs(largest - reference.largest) / scale).toBeLessThan(1e-12);
    }
  });

  it('finds the extremes of a known spectrum in fewer steps than the dimension', () => {
    // A diagonal matrix has its entries as eigenvalues; 1 and 100 stand apart from the cluster.
    const n = 300;
    const entries = Float64Array.from({ length: n }, (_, j) => 10 + (40 * j) / n);
    entries[17] = 1;
    entries[200] = 100;
    const result = extremeEigenvalues((v, out) => {
      for (let j = 0; j < n; j++) out[j] = entries[j] * v[j];
    }, n);
    expect(relative(result.smallest, 1)).toBeLessThan(1e-12);
    expect(relative(result.largest, 100)).toBeLessThan(1e-12);
    expect(result.iterations).toBeLessThan(n);
  });

  it('gives the exact Hessian extremes of least squares (reference: ml-matrix)', () => {
    const shard = gaussianShard(Rng.fromSeed(3), 0, 80, 30, 'real', 2, 1);
    const objective = new LeastSquaresObjective(shard, 1e-3);
    const a = featureMatrix(shard);
    const reference = symmetricExtremes(
      a.transpose().mmul(a).div(80).add(Matrix.eye(30).mul(1e-3)),
    );
    const result = hessianExtremeEigenvalues(objective, new Float64Array(30));
    expect(relative(result.smallest, reference.smallest)).toBeLessThan(1e-9);
    expect(relative(result.largest, reference.largest)).toBeLessThan(1e-9);
  });

  it('reports exactly 0 for a rank-deficient Gram matrix and refuses an indefinite one', () => {
    const shard = gaussianShard(Rng.fromSeed(4), 0, 5, 12, 'real');
    const a = Float64Array.from(shard.features);
    const projected = new Float64Array(5);
    const gram: SymmetricOperator = (v, out) => {
      for (let s = 0; s < 5; s++) {
        let z = 0;
        for (let j = 0; j < 12; j++) z += a[s * 12 + j] * v[j];
        projected[s] = z;
      }
      out.fill(0);
      for (let s = 0; s < 5; s++)
        for (let j = 0; j < 12; j++) out[j] += a[s * 12 + j] * projected[s];
    };
    expect(semidefiniteExtremeEigenvalues(gram, 12).smallest).toBe(0);
    const indefinite = randomSymmetric(Rng.fromSeed(5), 6);
    expect(errorCode(() => semidefiniteExtremeEigenvalues(denseOperator(indefinite), 6))).toBe(
      'E_LINALG_NOT_POSITIVE_DEFINITE',
    );
  });

  it('refuses to return unconverged Ritz values', () => {
    const m = randomSymmetric(Rng.fromSeed(6), 50);
    expect(errorCode(() => extremeEigenvalues(denseOperator(m), 50, { iterationsMax: 3 }))).toBe(
      'E_LINALG_NOT_CONVERGED',
    );
  });

  it('returns unconverged Ritz values as estimates only when asked, inside the spectrum', () => {
    const m = randomSymmetric(Rng.fromSeed(6), 50);
    const exact = new EigenvalueDecomposition(m).realEigenvalues;
    const trueSmallest = Math.min(...exact);
    const trueLargest = Math.max(...exact);
    const estimate = extremeEigenvalues(denseOperator(m), 50, {
      iterationsMax: 3,
      whenUnconverged: 'estimate',
    });
    expect(estimate.converged).toBe(false);
    expect(estimate.iterations).toBe(3);
    // Cauchy interlacing (Parlett, The Symmetric Eigenvalue Problem, section 10.1): Ritz values
    // lie between the extreme eigenvalues; after 3 steps of 50 they are still well inside.
    expect(estimate.smallest).toBeGreaterThanOrEqual(trueSmallest);
    expect(estimate.largest).toBeLessThanOrEqual(trueLargest);
    expect(relative(estimate.largest, trueLargest)).toBeGreaterThan(1e-6);
    const converged = extremeEigenvalues(denseOperator(m), 50, { whenUnconverged: 'estimate' });
    expect(converged.converged).toBe(true);
    expect(relative(converged.largest, trueLargest)).toBeLessThan(1e-10);
    expect(relative(converged.smallest, trueSmallest)).toBeLessThan(1e-10);
  });
});
