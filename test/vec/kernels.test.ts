// Kernels against ml-matrix (a reference linear-algebra library) on seeded random data.
import { describe, expect, it } from 'vitest';
import { Matrix } from 'ml-matrix';
import { Rng } from '../../src/base/rng.js';
import {
  add,
  allFinite,
  axpy,
  distanceSquared,
  dot,
  matTVec,
  matVec,
  norm2,
  normInf,
  normSquared,
  scale,
  subtract,
} from '../../src/vec/kernels.js';

const rng = Rng.derive(11, 'test', 'kernels');
const vec = (d: number): Float64Array => Float64Array.from({ length: d }, () => rng.normal());
const rel = (a: ArrayLike<number>, b: ArrayLike<number>): number => {
  let num = 0;
  let den = 0;
  for (let j = 0; j < a.length; j++) {
    num += (a[j] - b[j]) ** 2;
    den += b[j] ** 2;
  }
  return Math.sqrt(num / den);
};

describe('vector kernels', () => {
  it('matVec and matTVec equal ml-matrix products to 1e-14 relative', () => {
    for (const [rows, cols] of [
      [1, 1],
      [7, 3],
      [50, 120],
    ]) {
      const a = vec(rows * cols);
      const x = vec(cols);
      const y = vec(rows);
      const m = new Matrix(
        Array.from({ length: rows }, (_, r) => Array.from(a.subarray(r * cols, (r + 1) * cols))),
      );
      const out = new Float64Array(rows);
      matVec(a, rows, cols, x, out);
      expect(rel(out, m.mmul(Matrix.columnVector(Array.from(x))).getColumn(0))).toBeLessThan(1e-14);
      const outT = new Float64Array(cols);
      matTVec(a, rows, cols, y, outT);
      expect(
        rel(
          outT,
          m
            .transpose()
            .mmul(Matrix.columnVector(Array.from(y)))
            .getColumn(0),
        ),
      ).toBeLessThan(1e-14);
    }
  });

  it('dot, norms and distances agree with ml-matrix', () => {
    const x = vec(300);
    const y = vec(300);
    const mx = Matrix.rowVector(Array.from(x));
    const my = Matrix.rowVector(Array.from(y));
    expect(dot(x, y)).toBeCloseTo(mx.dot(my), 11);
    expect(norm2(x)).toBeCloseTo(mx.norm('frobenius'), 12);
    expect(normSquared(x)).toBeCloseTo(mx.norm('frobenius') ** 2, 10);
    expect(normInf(x)).toBe(Math.max(...x.map(Math.abs)));
    expect(distanceSquared(x, y)).toBeCloseTo(Matrix.sub(mx, my).norm('frobenius') ** 2, 10);
  });

  it('axpy, scale, add and subtract are the elementwise definitions', () => {
    const x = vec(10);
    const y = vec(10);
    const y0 = y.slice();
    axpy(0.5, x, y);
    for (let j = 0; j < 10; j++) expect(y[j]).toBe(y0[j] + 0.5 * x[j]);
    const s = x.slice();
    scale(-2, s);
    for (let j = 0; j < 10; j++) expect(s[j]).toBe(-2 * x[j]);
    const out = new Float64Array(10);
    add(x, y0, out);
    for (let j = 0; j < 10; j++) expect(out[j]).toBe(x[j] + y0[j]);
    subtract(x, y0, out);
    for (let j = 0; j < 10; j++) expect(out[j]).toBe(x[j] - y0[j]);
  });

  it('allFinite finds NaN and infinities', () => {
    expect(allFinite(Float64Array.of(1, -0, 5e-324))).toBe(true);
    expect(allFinite(Float64Array.of(1, Number.NaN))).toBe(false);
    expect(allFinite(Float64Array.of(Number.NEGATIVE_INFINITY))).toBe(false);
  });
});
