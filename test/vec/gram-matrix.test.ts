// The formed Gram matrix (panels through the gramUpper kernel) against ml-matrix's A^T diag(c) A.
// The two sum in different orders; each is within gamma_n sum |c_s a_sj a_sk| of the exact sum
// (Higham, Accuracy and Stability of Numerical Algorithms, 2nd ed., section 3.1, eq. (3.5),
// gamma_n = n u / (1 - n u), u = 2^-53), so they differ by at most twice that, entry by entry.
import { Matrix } from 'ml-matrix';
import { describe, expect, it } from 'vitest';
import { Rng } from '../../src/base/rng.js';
import { GRAM_PANEL_ROWS, GramMatrix, type WeightedRows } from '../../src/vec/gram-matrix.js';

const rng = Rng.derive(11, 'test', 'gram-matrix');
const UNIT_ROUNDOFF = 2 ** -53;
const gamma = (n: number) => (n * UNIT_ROUNDOFF) / (1 - n * UNIT_ROUNDOFF);

function blocksOf(dim: number, rowCounts: number[]): WeightedRows[] {
  return rowCounts.map((rowCount) => ({
    values: Float64Array.from({ length: rowCount * dim }, () => rng.normal()),
    rowCount,
    weight: 0.1 + rng.nextFloat(),
  }));
}

/** sum_b c_b A_b^T A_b by ml-matrix, and the matching bound sum_b c_b |A_b|^T |A_b|. */
function reference(dim: number, blocks: WeightedRows[]): { gram: Matrix; magnitude: Matrix } {
  let gram = Matrix.zeros(dim, dim);
  let magnitude = Matrix.zeros(dim, dim);
  for (const { values, rowCount, weight } of blocks) {
    if (rowCount === 0) continue;
    const a = new Matrix(
      Array.from({ length: rowCount }, (_, s) =>
        Array.from(values.subarray(s * dim, (s + 1) * dim)),
      ),
    );
    const absolute = a.clone().abs();
    gram = gram.add(a.transpose().mmul(a).mul(weight));
    magnitude = magnitude.add(absolute.transpose().mmul(absolute).mul(weight));
  }
  return { gram, magnitude };
}

/**
 * Shapes around the kernel's edges: dimensions odd and even (pairs of columns and a last single
 * one), row counts below, at and across a panel, and blocks that end inside a panel.
 */
const CASES: [dim: number, rowCounts: number[]][] = [
  [1, [3]],
  [2, [1, 4]],
  [3, [GRAM_PANEL_ROWS]],
  [7, [5, 0, 9]],
  [16, [GRAM_PANEL_ROWS - 1, 2]],
  [17, [2 * GRAM_PANEL_ROWS + 3]],
  [40, [30, 150, 61]],
];

describe('GramMatrix', () => {
  it('equals ml-matrix sum_b c_b A_b^T A_b within the summation bound, and is exactly symmetric', () => {
    for (const [dim, rowCounts] of CASES) {
      const blocks = blocksOf(dim, rowCounts);
      const formed = new GramMatrix(dim, blocks).toArray();
      const { gram, magnitude } = reference(dim, blocks);
      const rows = rowCounts.reduce((a, b) => a + b, 0);
      for (let j = 0; j < dim; j++) {
        for (let k = 0; k < dim; k++) {
          const bound = 2 * gamma(rows) * magnitude.get(j, k);
          expect(Math.abs(formed[j * dim + k] - gram.get(j, k))).toBeLessThanOrEqual(bound);
          expect(Object.is(formed[j * dim + k], formed[k * dim + j])).toBe(true);
        }
      }
    }
  });

  it('multiplies as ml-matrix does with its own entries, to the dot products bound', () => {
    for (const [dim, rowCounts] of CASES) {
      const matrix = new GramMatrix(dim, blocksOf(dim, rowCounts));
      const entries = matrix.toArray();
      const v = Float64Array.from({ length: dim }, () => rng.normal());
      const out = new Float64Array(dim);
      matrix.multiply(v, out);
      const g = new Matrix(
        Array.from({ length: dim }, (_, j) => Array.from(entries.subarray(j * dim, (j + 1) * dim))),
      );
      const expected = g.mmul(Matrix.columnVector(Array.from(v))).getColumn(0);
      const magnitude = g
        .clone()
        .abs()
        .mmul(Matrix.columnVector(Array.from(v, Math.abs)))
        .getColumn(0);
      for (let j = 0; j < dim; j++) {
        expect(Math.abs(out[j] - expected[j])).toBeLessThanOrEqual(2 * gamma(dim) * magnitude[j]);
      }
    }
  });

  it('gives the same bits from the same rows every time (determinism)', () => {
    const blocks = blocksOf(23, [70, 100]);
    const first = new GramMatrix(23, blocks).toArray();
    const second = new GramMatrix(23, blocks).toArray();
    expect(first.every((value, i) => Object.is(value, second[i]))).toBe(true);
  });
});
