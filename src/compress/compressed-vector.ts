// The value every compressor returns and every channel carries: a vector of dimension `dim`
// given either densely (indices null, one value per entry) or sparsely (sorted distinct indices
// and one value each, zeros elsewhere). Values are f64 or f32; an f32 value is the value as
// received, already rounded, so that both ends of a channel hold the very same numbers.

import { CompressError } from './compress-error.js';

export interface CompressedVector {
  readonly dim: number;
  /** null: dense; else strictly increasing indices in [0, dim) */
  readonly indices: Uint32Array | null;
  readonly values: Float64Array | Float32Array;
}

/** The dense Float64Array the vector stands for (zeros off the indices, f32 widened exactly). */
export function decompress(cv: CompressedVector): Float64Array {
  // Stores, not additions into zeros: 0 + (-0) is +0, and 'none' at f64 must be bit exact.
  if (cv.indices === null) return Float64Array.from(cv.values);
  const out = new Float64Array(cv.dim);
  for (let i = 0; i < cv.indices.length; i++) out[cv.indices[i]] = cv.values[i];
  return out;
}

/**
 * out <- out + a decompress(cv), touching only the carried entries. With a = +1 or -1 the
 * update is exact per entry, which error feedback and the downlink replica rely on.
 */
export function axpyCompressed(a: number, cv: CompressedVector, out: Float64Array): void {
  if (out.length !== cv.dim) {
    throw new CompressError(
      'E_COMPRESS_DIMENSION',
      `compressed vector of dimension ${cv.dim} added to one of ${out.length}`,
    );
  }
  const values = cv.values;
  const indices = cv.indices;
  if (indices === null) {
    for (let j = 0; j < values.length; j++) out[j] += a * values[j];
    return;
  }
  for (let i = 0; i < indices.length; i++) out[indices[i]] += a * values[i];
}

/**
 * Checks the invariants of the form (for vectors that arrive from elsewhere): a positive
 * integer dimension, equal to `expectedDim` when given; one value per entry (dense) or per
 * index (sparse); indices strictly increasing and below dim; every value finite.
 */
export function validateCompressedVector(cv: CompressedVector, expectedDim?: number): void {
  const { dim, indices, values } = cv;
  if (!Number.isInteger(dim) || dim < 1) {
    throw new CompressError(
      'E_COMPRESS_DIMENSION',
      `dimension must be a positive integer, got ${dim}`,
    );
  }
  if (expectedDim !== undefined && dim !== expectedDim) {
    throw new CompressError(
      'E_COMPRESS_DIMENSION',
      `expected dimension ${expectedDim}, got ${dim}`,
    );
  }
  if (indices === null) {
    if (values.length !== dim) {
      throw new CompressError(
        'E_COMPRESS_DIMENSION',
        `dense form needs ${dim} values, got ${values.length}`,
      );
    }
  } else {
    if (values.length !== indices.length) {
      throw new CompressError(
        'E_COMPRESS_DIMENSION',
        `${indices.length} indices but ${values.length} values`,
      );
    }
    if (indices.length > dim) {
      throw new CompressError(
        'E_COMPRESS_DIMENSION',
        `${indices.length} indices for dimension ${dim}`,
      );
    }
    for (let i = 1; i < indices.length; i++) {
      if (indices[i] <= indices[i - 1]) {
        throw new CompressError(
          'E_COMPRESS_INDEX_ORDER',
          `indices must be strictly increasing at position ${i}`,
        );
      }
    }
    if (indices.length > 0 && indices[indices.length - 1] >= dim) {
      throw new CompressError(
        'E_COMPRESS_INDEX_RANGE',
        `index ${indices[indices.length - 1]} is not below dimension ${dim}`,
      );
    }
  }
  for (let i = 0; i < values.length; i++) {
    if (!Number.isFinite(values[i])) {
      throw new CompressError('E_COMPRESS_NOT_FINITE', `value ${i} is ${values[i]}`);
    }
  }
}
