// The choice between the sparse and the dense form of a compressed vector. Rule: sparse only
// when it carries strictly fewer payload bytes than dense, i.e. when
//   k * valueBytes + deltaVarintBytes(indices) < d * valueBytes;
// otherwise dense, with zeros off the kept entries. Both forms decompress to the same vector,
// so the choice changes bytes, never results. Ties go dense: no indices to code or to check.
// In practice sparse wins up to k of roughly d * valueBytes / (valueBytes + 1), where every
// gap costs one index byte (k near 8d/9 for f64, 4d/5 for f32).

import type { CompressedVector } from './compressed-vector.js';
import { denseBytes, sparseBytes } from './payload-bytes.js';

/** Kept entries (sorted indices, one value each) -> the smaller wire form. */
export function toWireForm(
  dim: number,
  indices: Uint32Array,
  values: Float64Array | Float32Array,
): CompressedVector {
  const bytesPerValue = values.BYTES_PER_ELEMENT;
  if (sparseBytes(indices, bytesPerValue) < denseBytes(dim, bytesPerValue)) {
    return { dim, indices, values };
  }
  const dense = values instanceof Float32Array ? new Float32Array(dim) : new Float64Array(dim);
  for (let i = 0; i < indices.length; i++) dense[indices[i]] = values[i];
  return { dim, indices: null, values: dense };
}
