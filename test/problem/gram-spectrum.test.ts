// A shard's Gram spectrum on the row kernels, on both sides (A^T A / n when n >= p, A A^T / n when
// n < p, formed up to ROW_GRAM_SAMPLES_MAX samples and applied through the data above), against
// ml-matrix products and its EigenvalueDecomposition.
import { describe, expect, it } from 'vitest';
import { Rng } from '../../src/base/rng.js';
import {
  ROW_GRAM_SAMPLES_MAX,
  gramExtremeEigenvalues,
  gramLargestEigenvalue,
  rowGram,
} from '../../src/problem/gram-spectrum.js';
import { RowMatrix } from '../../src/vec/row-matrix.js';
import { featureMatrix, gaussianShard, symmetricExtremes } from './fixtures.js';

const UNIT_ROUNDOFF = 2 ** -53;
const gamma = (n: number) => (n * UNIT_ROUNDOFF) / (1 - n * UNIT_ROUNDOFF);

function shardMatrix(seed: number, n: number, p: number) {
  const shard = gaussianShard(Rng.fromSeed(seed), 0, n, p, 'real', 1.3, 0.4);
  const matrix = new RowMatrix(shard.features, n, p, shard.targets);
  return { a: featureMatrix(shard), matrix };
}

describe('Gram spectrum on the row kernels', () => {
  it('forms A A^T / n as ml-matrix does, within the summation bound, exactly symmetric', () => {
    const n = 9;
    const p = 30;
    const { a, matrix } = shardMatrix(1, n, p);
    const gram = rowGram(matrix);
    const reference = a.mmul(a.transpose()).div(n);
    const absolute = a.clone().abs();
    const magnitude = absolute.mmul(absolute.transpose()).div(n);
    for (let r = 0; r < n; r++) {
      for (let c = 0; c < n; c++) {
        // Higham, Accuracy and Stability of Numerical Algorithms, 2nd ed., eq. (3.5), both orders.
        expect(Math.abs(gram[r * n + c] - reference.get(r, c))).toBeLessThanOrEqual(
          2 * gamma(p) * magnitude.get(r, c) + Number.MIN_VALUE,
        );
        expect(Object.is(gram[r * n + c], gram[c * n + r])).toBe(true);
      }
    }
  });

  it('gives lambda_max(A^T A / n) on the formed and the matrix-free dual side, and both extremes when n >= p (reference: ml-matrix EigenvalueDecomposition, 1e-12 relative)', () => {
    const shapes: [n: number, p: number][] = [
      [12, 40],
      [ROW_GRAM_SAMPLES_MAX + 6, 90],
      [60, 25],
    ];
    shapes.forEach(([n, p], i) => {
      const { a, matrix } = shardMatrix(10 + i, n, p);
      const { smallest, largest } = symmetricExtremes(a.transpose().mmul(a).div(n));
      expect(Math.abs(gramLargestEigenvalue(matrix) - largest) / largest).toBeLessThan(1e-12);
      const extremes = gramExtremeEigenvalues(matrix);
      expect(Math.abs(extremes.largest - largest) / largest).toBeLessThan(1e-12);
      if (n < p) expect(extremes.smallest).toBe(0);
      else expect(Math.abs(extremes.smallest - smallest) / smallest).toBeLessThan(1e-12);
    });
  });
});
