// The payload layer of the byte count: the information a compressed vector carries, values and
// indices, before any codec framing. The dimension is not counted: both ends know it from the
// plan. Beside it, the information bound says how few bits any index coding could use.

import type { CompressedVector } from './compressed-vector.js';
import { deltaVarintByteLength } from './index-coding.js';

/** Bytes of one value at a wire width. */
export function valueBytes(width: 'f64' | 'f32'): number {
  return width === 'f64' ? 8 : 4;
}

/** Bytes of the dense form: one value per entry. */
export function denseBytes(dim: number, bytesPerValue: number): number {
  return dim * bytesPerValue;
}

/** Bytes of the sparse form: one value per kept index plus the delta varint index bytes. */
export function sparseBytes(indices: Uint32Array, bytesPerValue: number): number {
  return indices.length * bytesPerValue + deltaVarintByteLength(indices);
}

/** The payload bytes a compressed vector carries in the form it is in. */
export function payloadBytes(cv: CompressedVector): number {
  const bytesPerValue = cv.values.BYTES_PER_ELEMENT;
  return cv.indices === null
    ? denseBytes(cv.dim, bytesPerValue)
    : sparseBytes(cv.indices, bytesPerValue);
}

/** The payload bytes of a message's fields, summed. */
export function fieldsPayloadBytes(fields: Readonly<Record<string, CompressedVector>>): number {
  let total = 0;
  for (const cv of Object.values(fields)) total += payloadBytes(cv);
  return total;
}

/**
 * log2 C(d, k): the bits needed to name one k-subset of d positions when every subset is
 * possible, the floor under any index coding. Summed as logs of the ratios (d - m + i) / i,
 * m = min(k, d - k), so nothing overflows however large d is.
 */
export function informationBoundBits(d: number, k: number): number {
  if (!Number.isInteger(d) || !Number.isInteger(k) || d < 0 || k < 0 || k > d) {
    throw new RangeError(`informationBoundBits needs integers 0 <= k <= d, got d = ${d}, k = ${k}`);
  }
  const m = Math.min(k, d - k);
  let bits = 0;
  for (let i = 1; i <= m; i++) bits += Math.log2((d - m + i) / i);
  return bits;
}
