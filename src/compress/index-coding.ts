// The index half of the sparse wire form. Sorted indices are delta coded (the first index,
// then each gap minus one, so that consecutive indices cost a zero) and every number is an
// unsigned LEB128 varint (DWARF Debugging Information Format, version 4, section 7.6): 7 bits
// a byte, low group first, high bit set on every byte but the last. Small gaps, the common case
// once k << d, take one byte instead of the four of a raw uint32.

import { CompressError } from './compress-error.js';

/** A uint32 needs at most ceil(32 / 7) = 5 groups of 7 bits. */
const VARINT_BYTES_MAX = 5;
const UINT32_MAX = 0xffffffff;

function varintByteLength(value: number): number {
  if (value < 0x80) return 1;
  if (value < 0x4000) return 2;
  if (value < 0x200000) return 3;
  if (value < 0x10000000) return 4;
  return VARINT_BYTES_MAX;
}

function assertStrictlyIncreasing(indices: Uint32Array): void {
  for (let i = 1; i < indices.length; i++) {
    if (indices[i] <= indices[i - 1]) {
      throw new CompressError(
        'E_COMPRESS_INDEX_ORDER',
        `indices must be strictly increasing: position ${i} holds ${indices[i]} after ${indices[i - 1]}`,
      );
    }
  }
}

/** Bytes that encodeIndicesDeltaVarint(indices) would produce, without producing them. */
export function deltaVarintByteLength(indices: Uint32Array): number {
  assertStrictlyIncreasing(indices);
  let total = 0;
  let previous = -1;
  for (let i = 0; i < indices.length; i++) {
    total += varintByteLength(indices[i] - previous - 1);
    previous = indices[i];
  }
  return total;
}

/** Strictly increasing indices -> delta varint bytes. */
export function encodeIndicesDeltaVarint(indices: Uint32Array): Uint8Array {
  const out = new Uint8Array(deltaVarintByteLength(indices));
  let pos = 0;
  let previous = -1;
  for (let i = 0; i < indices.length; i++) {
    let gap = indices[i] - previous - 1;
    while (gap >= 0x80) {
      out[pos++] = (gap & 0x7f) | 0x80;
      gap >>>= 7;
    }
    out[pos++] = gap;
    previous = indices[i];
  }
  return out;
}

/**
 * Delta varint bytes -> exactly k strictly increasing indices. The bytes come from the network,
 * so everything is checked: truncation, trailing bytes, overlong (non-canonical) groups, and
 * indices beyond uint32. The caller still checks the indices against its dimension.
 */
export function decodeIndicesDeltaVarint(bytes: Uint8Array, k: number): Uint32Array {
  if (!Number.isInteger(k) || k < 0) {
    throw new CompressError(
      'E_COMPRESS_VARINT',
      `index count must be a non-negative integer, got ${k}`,
    );
  }
  // Every index takes at least one byte: this bounds the allocation below by the message size.
  if (k > bytes.length) {
    throw new CompressError(
      'E_COMPRESS_VARINT',
      `${k} indices cannot fit in ${bytes.length} bytes`,
    );
  }
  const out = new Uint32Array(k);
  let pos = 0;
  let previous = -1;
  for (let i = 0; i < k; i++) {
    let gap = 0;
    let weight = 1;
    for (let group = 0; ; group++) {
      if (pos >= bytes.length) {
        throw new CompressError('E_COMPRESS_VARINT', `index ${i} is truncated at byte ${pos}`);
      }
      const byte = bytes[pos++];
      const last = (byte & 0x80) === 0;
      if (group === VARINT_BYTES_MAX - 1 && (!last || byte > 0x0f)) {
        throw new CompressError(
          'E_COMPRESS_VARINT',
          `index ${i} overflows 32 bits at byte ${pos - 1}`,
        );
      }
      if (last && byte === 0 && group > 0) {
        throw new CompressError(
          'E_COMPRESS_VARINT',
          `index ${i} has an overlong coding at byte ${pos - 1}`,
        );
      }
      gap += (byte & 0x7f) * weight;
      if (last) break;
      weight *= 0x80;
    }
    const index = previous + 1 + gap;
    if (index > UINT32_MAX) {
      throw new CompressError('E_COMPRESS_INDEX_RANGE', `index ${i} is ${index}, beyond uint32`);
    }
    out[i] = index;
    previous = index;
  }
  if (pos !== bytes.length) {
    throw new CompressError(
      'E_COMPRESS_VARINT',
      `${bytes.length - pos} bytes left after ${k} indices`,
    );
  }
  return out;
}
