import { describe, expect, it } from 'vitest';
import { CompressError } from '../../src/compress/compress-error.js';
import {
  axpyCompressed,
  decompress,
  validateCompressedVector,
  type CompressedVector,
} from '../../src/compress/compressed-vector.js';
import { codeOf } from '../support/error-code.js';

const compressErrorCode = (action: () => unknown): string => codeOf(action, CompressError);

describe('decompress', () => {
  it('scatters a sparse vector into zeros and widens f32 exactly', () => {
    const cv: CompressedVector = {
      dim: 5,
      indices: Uint32Array.of(1, 4),
      values: Float32Array.of(0.1, -3),
    };
    // Float32 -> Float64 widening is exact (IEEE 754), so the result equals Math.fround(0.1).
    expect(Array.from(decompress(cv))).toEqual([0, Math.fround(0.1), 0, 0, -3]);
  });

  it('copies a dense vector bit for bit, signed zeros included', () => {
    const values = Float64Array.of(-0, 1e-310, 2);
    const out = decompress({ dim: 3, indices: null, values });
    expect(out).toEqual(values);
    expect(Object.is(out[0], -0)).toBe(true);
    expect(out).not.toBe(values);
  });
});

describe('axpyCompressed', () => {
  it('adds a times the carried entries only', () => {
    const out = Float64Array.of(1, 1, 1, 1);
    axpyCompressed(
      -1,
      { dim: 4, indices: Uint32Array.of(0, 3), values: Float64Array.of(2, 5) },
      out,
    );
    expect(Array.from(out)).toEqual([-1, 1, 1, -4]);
    expect(
      compressErrorCode(() =>
        axpyCompressed(1, { dim: 3, indices: null, values: new Float64Array(3) }, out),
      ),
    ).toBe('E_COMPRESS_DIMENSION');
  });
});

describe('validateCompressedVector', () => {
  it('accepts well-formed vectors', () => {
    validateCompressedVector({ dim: 3, indices: null, values: new Float64Array(3) }, 3);
    validateCompressedVector({ dim: 3, indices: new Uint32Array(0), values: new Float32Array(0) });
    validateCompressedVector({
      dim: 3,
      indices: Uint32Array.of(0, 2),
      values: Float64Array.of(1, 2),
    });
  });

  it('names each broken invariant with its code', () => {
    const bad: [CompressedVector, number | undefined, string][] = [
      [{ dim: 0, indices: null, values: new Float64Array(0) }, undefined, 'E_COMPRESS_DIMENSION'],
      [{ dim: 2.5, indices: null, values: new Float64Array(2) }, undefined, 'E_COMPRESS_DIMENSION'],
      [{ dim: 3, indices: null, values: new Float64Array(3) }, 4, 'E_COMPRESS_DIMENSION'],
      [{ dim: 3, indices: null, values: new Float64Array(2) }, undefined, 'E_COMPRESS_DIMENSION'],
      [
        { dim: 3, indices: Uint32Array.of(0), values: Float64Array.of(1, 2) },
        undefined,
        'E_COMPRESS_DIMENSION',
      ],
      [
        { dim: 2, indices: Uint32Array.of(0, 1, 2), values: new Float64Array(3) },
        undefined,
        'E_COMPRESS_DIMENSION',
      ],
      [
        { dim: 3, indices: Uint32Array.of(1, 1), values: new Float64Array(2) },
        undefined,
        'E_COMPRESS_INDEX_ORDER',
      ],
      [
        { dim: 3, indices: Uint32Array.of(0, 3), values: new Float64Array(2) },
        undefined,
        'E_COMPRESS_INDEX_RANGE',
      ],
      [
        { dim: 3, indices: null, values: Float64Array.of(0, NaN, 0) },
        undefined,
        'E_COMPRESS_NOT_FINITE',
      ],
      [
        { dim: 3, indices: Uint32Array.of(2), values: Float32Array.of(Infinity) },
        undefined,
        'E_COMPRESS_NOT_FINITE',
      ],
    ];
    for (const [cv, expectedDim, code] of bad) {
      expect(compressErrorCode(() => validateCompressedVector(cv, expectedDim))).toBe(code);
    }
  });
});
