// The row kernels (WebAssembly SIMD) against plain loops. Two kinds of reference:
// - the documented summation order restated as a scalar loop: must agree bit for bit, since
//   both do the same IEEE binary64 operations in the same order;
// - the textbook left-to-right loop: a different order, so the last bits move. Both orders obey
//   the recursive-summation error bound |fl(sum) - sum| <= gamma_n sum |a_j x_j| with
//   gamma_n = n u / (1 - n u), u = 2^-53 (Higham, Accuracy and Stability of Numerical
//   Algorithms, 2nd ed., section 3.1, eq. (3.5)), so they differ by at most twice that.
import { describe, expect, it } from 'vitest';
import { Rng } from '../../src/base/rng.js';
import { RowMatrix } from '../../src/vec/row-matrix.js';
import { DOT_BLOCK } from '../../src/vec/wasm/row-kernels-module.js';

const rng = Rng.derive(11, 'test', 'row-matrix');
const vec = (d: number): Float64Array => Float64Array.from({ length: d }, () => rng.normal());
const UNIT_ROUNDOFF = 2 ** -53;
const gamma = (n: number) => (n * UNIT_ROUNDOFF) / (1 - n * UNIT_ROUNDOFF);

/** The kernel's order: DOT_BLOCK partial sums by j mod DOT_BLOCK, a fixed tree, then the tail. */
function dotInKernelOrder(a: Float64Array, offset: number, x: Float64Array, n: number): number {
  const partial = new Float64Array(DOT_BLOCK);
  const blockEnd = n - (n % DOT_BLOCK);
  let j = 0;
  for (; j < blockEnd; j += DOT_BLOCK) {
    for (let k = 0; k < DOT_BLOCK; k++) partial[k] += a[offset + j + k] * x[j + k];
  }
  const [s0, s1, s2, s3, s4, s5, s6, s7] = partial;
  let sum = s0 + s2 + (s4 + s6) + (s1 + s3 + (s5 + s7));
  for (; j < n; j++) sum += a[offset + j] * x[j];
  return sum;
}

function dotLeftToRight(a: Float64Array, offset: number, x: Float64Array, n: number) {
  let sum = 0;
  let magnitude = 0;
  for (let j = 0; j < n; j++) {
    sum += a[offset + j] * x[j];
    magnitude += Math.abs(a[offset + j] * x[j]);
  }
  return { sum, magnitude };
}

/** Shapes around the block of 8 and the f64x2 pair: empty tails, tails of 1..7, odd lengths. */
const SHAPES: [rows: number, cols: number][] = [
  [1, 1],
  [3, 2],
  [5, 7],
  [4, 8],
  [6, 9],
  [7, 15],
  [9, 16],
  [2, 17],
  [33, 100],
  [20, 1001],
];

describe('row kernels', () => {
  it('sums each dot product in the documented order, bit for bit, and within the summation bound of the left-to-right loop', () => {
    expect(DOT_BLOCK).toBe(8);
    for (const [rows, cols] of SHAPES) {
      const a = vec(rows * cols);
      const matrix = new RowMatrix(a, rows, cols, vec(rows));
      const x = vec(cols + 3);
      const z = new Float64Array(rows);
      matrix.rowDots(x, 3, null, z);
      const xs = x.subarray(3);
      for (let s = 0; s < rows; s++) {
        expect(Object.is(z[s], dotInKernelOrder(a, s * cols, xs, cols))).toBe(true);
        const { sum, magnitude } = dotLeftToRight(a, s * cols, xs, cols);
        expect(Math.abs(z[s] - sum)).toBeLessThanOrEqual(2 * gamma(cols) * magnitude);
      }
    }
  });

  it('adds weighted rows in the listed order with the bits of the scalar loop (no reordering)', () => {
    for (const [rows, cols] of SHAPES) {
      const a = vec(rows * cols);
      const matrix = new RowMatrix(a, rows, cols, vec(rows));
      const list = Uint32Array.from({ length: 2 * rows + 1 }, () => rng.nextInt(rows));
      const w = vec(list.length);
      const out = vec(cols + 5);
      const expected = Float64Array.from(out);
      for (let t = 0; t < list.length; t++) {
        for (let j = 0; j < cols; j++) expected[5 + j] += w[t] * a[list[t] * cols + j];
      }
      matrix.rowCombine(w, list, out, 5);
      expect(out).toEqual(expected);
      for (let j = 0; j < out.length; j++) expect(Object.is(out[j], expected[j])).toBe(true);
    }
  });

  it('fuses the projection sum (c_s (a_s . x)) a_s in one pass with the bits of rowDots then rowCombine', () => {
    for (const [rows, cols] of SHAPES) {
      const a = vec(rows * cols);
      const matrix = new RowMatrix(a, rows, cols, vec(rows));
      const x = vec(cols);
      const factors = vec(rows);
      const dots = new Float64Array(rows);
      matrix.rowDots(x, 0, null, dots);
      for (const c of [null, factors]) {
        const weights = Float64Array.from(dots, (z, s) => (c === null ? z : c[s] * z));
        const start = vec(cols);
        const expected = Float64Array.from(start);
        matrix.rowCombine(weights, null, expected, 0);
        const out = Float64Array.from(start);
        matrix.projectCombine(x, c, out);
        for (let j = 0; j < cols; j++) expect(Object.is(out[j], expected[j])).toBe(true);
      }
    }
  });

  it('fuses the residual sum (a_s . x - b_s) a_s in one pass with the bits of its two-step form', () => {
    for (const [rows, cols] of SHAPES) {
      const a = vec(rows * cols);
      const b = vec(rows);
      const matrix = new RowMatrix(a, rows, cols, b);
      const x = vec(cols);
      const out = new Float64Array(cols);
      matrix.residualSum(x, null, out);
      const expected = new Float64Array(cols);
      for (let s = 0; s < rows; s++) {
        const residual = dotInKernelOrder(a, s * cols, x, cols) - b[s];
        for (let j = 0; j < cols; j++) expected[j] += residual * a[s * cols + j];
      }
      for (let j = 0; j < cols; j++) expect(Object.is(out[j], expected[j])).toBe(true);
    }
  });

  it('gives every row listed in order the bits of rows = null, and walks a list longer than the matrix in chunks', () => {
    const [rows, cols] = [7, 13];
    const a = vec(rows * cols);
    const b = vec(rows);
    const matrix = new RowMatrix(a, rows, cols, b);
    const x = vec(cols);
    const all = new Float64Array(cols);
    const listed = new Float64Array(cols);
    matrix.residualSum(x, null, all);
    matrix.residualSum(
      x,
      Uint32Array.from({ length: rows }, (_, s) => s),
      listed,
    );
    for (let j = 0; j < cols; j++) expect(Object.is(listed[j], all[j])).toBe(true);

    // 3 rows + 1: the kernel sees chunks of 7, 7, 7 and 1 rows; the sum is still one walk.
    const long = Uint32Array.from({ length: 3 * rows + 1 }, (_, t) => (5 * t + 2) % rows);
    const out = new Float64Array(cols);
    matrix.residualSum(x, long, out);
    const expected = new Float64Array(cols);
    for (const s of long) {
      const residual = dotInKernelOrder(a, s * cols, x, cols) - b[s];
      for (let j = 0; j < cols; j++) expected[j] += residual * a[s * cols + j];
    }
    for (let j = 0; j < cols; j++) expect(Object.is(out[j], expected[j])).toBe(true);
    const z = new Float64Array(long.length);
    matrix.rowDots(x, 0, long, z);
    long.forEach((s, t) =>
      expect(Object.is(z[t], dotInKernelOrder(a, s * cols, x, cols))).toBe(true),
    );
  });

  it('keeps its own copy of the data in kernel memory', () => {
    const a = vec(6);
    const matrix = new RowMatrix(a, 2, 3, vec(2));
    expect(matrix.values).toEqual(a);
    a[0] += 1;
    expect(matrix.values[0]).not.toBe(a[0]);
  });
});
