import { Matrix } from 'ml-matrix';
import { describe, expect, it } from 'vitest';
import { Rng } from '../../src/base/rng.js';
import { affineDefect, applyRoundMap, linearPart } from '../../src/theory/affine-map.js';
import { TheoryError } from '../../src/theory/theory-error.js';
import { matrixMap, randomArray, randomMatrix } from './fixtures/affine-maps.js';
import { codeOf } from '../support/error-code.js';

const theoryErrorCode = (action: () => unknown): string => codeOf(action, TheoryError);

function relativeDistance(a: ArrayLike<number>, b: ArrayLike<number>): number {
  let difference = 0;
  let size = 0;
  for (let j = 0; j < a.length; j++) {
    difference += (a[j] - b[j]) ** 2;
    size += b[j] ** 2;
  }
  return Math.sqrt(difference / size);
}

describe('linearPart', () => {
  const rng = Rng.fromSeed(11);
  const n = 9;
  const a = randomMatrix(rng, n);
  const b = randomArray(rng, n, 50);
  const map = matrixMap(a, b);

  it('is v -> A v for T(s) = A s + b, even around a base of norm 1e6 (ml-matrix mmul as reference)', () => {
    const base = Float64Array.from(randomArray(rng, n, 1e6 / Math.sqrt(n)));
    const apply = linearPart(map, base);
    for (const size of [1e-6, 1, 1e6]) {
      const v = Float64Array.from(randomArray(rng, n, size));
      const expected = a.mmul(Matrix.columnVector(Array.from(v))).getColumn(0);
      // A few hundred ulps: the probe-norm choice keeps the cancellation at rounding level of ||A||
      // (the bound stated in linearPart's comment), whatever ||v|| and ||base|| are.
      expect(relativeDistance(apply(v), expected)).toBeLessThan(1e-13);
    }
  });

  it('maps the zero direction to zero without applying T', () => {
    let applications = 0;
    const apply = linearPart((s) => {
      applications++;
      return map(s);
    }, new Float64Array(n));
    expect(Array.from(apply(new Float64Array(n)))).toEqual(Array(n).fill(0));
    expect(applications).toBe(1);
  });

  it('leaves the base untouched and rejects maps that change length or produce NaN', () => {
    const base = Float64Array.from(randomArray(rng, n));
    const copy = Float64Array.from(base);
    linearPart(map, base)(Float64Array.from(randomArray(rng, n)));
    expect(Array.from(base)).toEqual(Array.from(copy));
    expect(theoryErrorCode(() => linearPart((s) => s.subarray(1), base))).toBe(
      'E_THEORY_DIMENSION',
    );
    expect(theoryErrorCode(() => applyRoundMap((s) => s.map(() => NaN), base))).toBe(
      'E_THEORY_NOT_FINITE',
    );
    expect(theoryErrorCode(() => linearPart(map, base)(new Float64Array(n + 1)))).toBe(
      'E_THEORY_DIMENSION',
    );
    expect(theoryErrorCode(() => linearPart(map, base, { probeNorm: 0 }))).toBe(
      'E_THEORY_ARGUMENT',
    );
  });
});

describe('affineDefect', () => {
  const rng = Rng.fromSeed(12);
  const n = 7;
  const base = Float64Array.from(randomArray(rng, n, 3));

  it('is at rounding level for an affine map and of order one for a curved one', () => {
    // Affine: the second difference T(b+v) + T(b-v) - 2T(b) cancels exactly but for rounding
    // (ulps of ||T|| at the probe scale, common practice for "zero" in double precision).
    expect(affineDefect(matrixMap(randomMatrix(rng, n), randomArray(rng, n)), base)).toBeLessThan(
      1e-13,
    );
    // Elementwise tanh at unit scale bends visibly: its second difference is a sizeable share of the first.
    expect(affineDefect((s) => s.map(Math.tanh), base)).toBeGreaterThan(1e-3);
    // A map that forgets its input is affine (M = 0).
    expect(affineDefect((s) => new Float64Array(s.length).fill(2), base)).toBe(0);
  });
});
