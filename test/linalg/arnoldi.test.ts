import { EigenvalueDecomposition, Matrix } from 'ml-matrix';
import { describe, expect, it } from 'vitest';
import { Rng } from '../../src/base/rng.js';
import { dominantEigenvalue } from '../../src/linalg/arnoldi.js';
import { LinalgError } from '../../src/linalg/linalg-error.js';
import {
  randomArray,
  randomMatrix,
  referenceSpectrum,
  similarTo,
} from '../theory/fixtures/affine-maps.js';

// Every reference is max |lambda| from ml-matrix's EigenvalueDecomposition of the same matrix;
// 1e-8 relative is the accuracy asked of the estimate (its residual tolerance is 1e-10 here,
// so that the eigenvalue's condition number has room).
const RELATIVE = 1e-8;
const TOLERANCE = 1e-10;

const operatorOf = (a: Matrix) => (v: Float64Array) =>
  Float64Array.from(a.mmul(Matrix.columnVector(Array.from(v))).getColumn(0));
const relativeError = (value: number, reference: number) =>
  Math.abs(value - reference) / Math.abs(reference);

/** Eigenvalues `dominant` and a cluster below it, then the rest spread over a disk of radius `bulk`. */
function spectrum(
  rng: Rng,
  pairs: Array<[number, number]>,
  reals: number[],
  bulkCount: number,
  bulk: number,
): Matrix {
  const rest = Array.from({ length: bulkCount }, () => bulk * (2 * rng.nextFloat() - 1));
  return similarTo(rng, pairs, [...reals, ...rest]);
}

describe('dominantEigenvalue (restarted Arnoldi)', () => {
  // Matrices of i.i.d. entries have many eigenvalues near the rim of their disk (circular law),
  // which a single-vector restart does not separate: they are checked within one Krylov space.
  it('finds max |lambda| of random non-symmetric matrices from the Ritz values of one Krylov space', () => {
    for (let seed = 1; seed <= 4; seed++) {
      const rng = Rng.fromSeed(100 + seed);
      const a = randomMatrix(rng, 25);
      const result = dominantEigenvalue(operatorOf(a), Float64Array.from(randomArray(rng, 25)), {
        tolerance: TOLERANCE,
      });
      expect(result.converged).toBe(true);
      expect(relativeError(result.modulus, referenceSpectrum(a).spectralRadius)).toBeLessThan(
        RELATIVE,
      );
    }
  });

  it('a real dominant eigenvalue and a complex dominant pair, each above a cluster with relative gap 1e-3', () => {
    const rng = Rng.fromSeed(7);
    const real = spectrum(
      rng,
      [],
      [0.9, 0.9 * (1 - 1e-3), 0.9 * (1 - 2e-3), -0.9 * (1 - 1.5e-3)],
      56,
      0.8,
    );
    const realResult = dominantEigenvalue(
      operatorOf(real),
      Float64Array.from(randomArray(rng, 60)),
      { tolerance: TOLERANCE },
    );
    expect(realResult.converged).toBe(true);
    expect(realResult.imaginary).toBe(0);
    expect(relativeError(realResult.modulus, referenceSpectrum(real).spectralRadius)).toBeLessThan(
      RELATIVE,
    );
    expect(realResult.restarts).toBeGreaterThan(0);

    // 0.6 +- 0.7i has modulus 0.92195; the next pair sits 1e-3 below it in modulus.
    const r = Math.hypot(0.6, 0.7) * (1 - 1e-3);
    const complex = spectrum(
      rng,
      [
        [0.6, 0.7],
        [r * Math.cos(1), r * Math.sin(1)],
      ],
      [0.85],
      55,
      0.8,
    );
    const reference = referenceSpectrum(complex);
    expect(reference.dominantImaginary).not.toBe(0);
    const complexResult = dominantEigenvalue(
      operatorOf(complex),
      Float64Array.from(randomArray(rng, 60)),
      { tolerance: TOLERANCE },
    );
    expect(complexResult.converged).toBe(true);
    expect(complexResult.imaginary).toBeGreaterThan(0);
    expect(relativeError(complexResult.modulus, reference.spectralRadius)).toBeLessThan(RELATIVE);
  });

  it('leaves out an eigenvalue exactly 1 along a conserved direction when movingOnly (start filtered by I - M)', () => {
    const rng = Rng.fromSeed(8);
    // Eigenvalues 1, 1 (conserved), then 0.95 and a cluster 1e-3 below it: the moving rho is 0.95.
    const a = spectrum(rng, [], [1, 1, 0.95, 0.95 * (1 - 1e-3), -0.94], 45, 0.8);
    const start = Float64Array.from(randomArray(rng, 50));
    const moving = dominantEigenvalue(operatorOf(a), start, {
      tolerance: TOLERANCE,
      movingOnly: true,
    });
    expect(moving.converged).toBe(true);
    expect(relativeError(moving.modulus, 0.95)).toBeLessThan(RELATIVE);
    // Without the filter the same start finds the conserved eigenvalue (ml-matrix: rho = 1).
    const all = dominantEigenvalue(operatorOf(a), start, { tolerance: TOLERANCE });
    expect(relativeError(all.modulus, referenceSpectrum(a).spectralRadius)).toBeLessThan(RELATIVE);
  });

  it('stops at productsMax with converged false, and counts its products', () => {
    const rng = Rng.fromSeed(9);
    const a = spectrum(rng, [], [0.9, 0.9 * (1 - 1e-3)], 58, 0.8);
    let products = 0;
    const apply = operatorOf(a);
    const result = dominantEigenvalue(
      (v) => {
        products++;
        return apply(v);
      },
      Float64Array.from(randomArray(rng, 60)),
      { productsMax: 10, movingOnly: true },
    );
    expect(result.converged).toBe(false);
    expect(result.products).toBe(10);
    expect(products).toBe(10);
  });

  it('rejects bad options and a zero start with E_ARGUMENT', () => {
    const identity = (v: Float64Array) => Float64Array.from(v);
    for (const options of [{ krylovDimension: 0 }, { productsMax: 0 }, { tolerance: 0 }]) {
      expect(() => dominantEigenvalue(identity, Float64Array.of(1, 2), options)).toThrowError(
        LinalgError,
      );
    }
    expect(() => dominantEigenvalue(identity, new Float64Array(2))).toThrowError(LinalgError);
  });
});

describe('the subdominant Ritz value', () => {
  // Dimension 20 is below the Krylov dimension (30), so one cycle holds the whole spectrum's
  // outer part; the references are ml-matrix's eigenvalues of the same matrix.
  const subdominantReference = (a: Matrix, skip: (re: number, im: number) => boolean) => {
    const { realEigenvalues, imaginaryEigenvalues } = new EigenvalueDecomposition(a);
    let best = 0;
    realEigenvalues.forEach((re, k) => {
      const im = imaginaryEigenvalues[k];
      if (!skip(re, im)) best = Math.max(best, Math.hypot(re, im));
    });
    return best;
  };

  it('skips the -r partner of a real dominant eigenvalue', () => {
    const rng = Rng.fromSeed(21);
    const a = spectrum(rng, [], [0.9, -0.9, 0.7], 17, 0.5);
    const result = dominantEigenvalue(operatorOf(a), Float64Array.from(randomArray(rng, 20)), {
      tolerance: TOLERANCE,
    });
    const reference = subdominantReference(a, (re) => Math.abs(Math.abs(re) - 0.9) < 1e-6);
    expect(relativeError(reference, 0.7)).toBeLessThan(RELATIVE);
    // A by-product of the dominant's iteration, which stops before the space is invariant here:
    // the next eigenvalue to six digits, and its residual says it is not yet at eight.
    expect(relativeError(result.subdominant!.modulus, reference)).toBeLessThan(1e-6);
    expect(result.subdominant!.residual).toBeLessThan(1e-6);
  });

  it('skips the conjugate of a dominant complex pair', () => {
    const rng = Rng.fromSeed(22);
    const a = spectrum(rng, [[0.6, 0.7]], [0.8], 17, 0.5);
    const result = dominantEigenvalue(operatorOf(a), Float64Array.from(randomArray(rng, 20)), {
      tolerance: TOLERANCE,
    });
    expect(result.imaginary).toBeGreaterThan(0);
    const reference = subdominantReference(a, (_re, im) => Math.abs(Math.abs(im) - 0.7) < 1e-6);
    expect(relativeError(result.subdominant!.modulus, reference)).toBeLessThan(RELATIVE);
  });

  it('is null when nothing else is in the space (a multiple of the identity)', () => {
    const result = dominantEigenvalue(
      (v) => Float64Array.from(v, (x) => 0.5 * x),
      new Float64Array([1, 2, 3]),
    );
    expect(result.modulus).toBeCloseTo(0.5, 15);
    expect(result.subdominant).toBeNull();
  });
});
