import { describe, expect, it } from 'vitest';
import { Rng } from '../../src/base/rng.js';
import { CompressError } from '../../src/compress/compress-error.js';
import {
  decodeIndicesDeltaVarint,
  deltaVarintByteLength,
  encodeIndicesDeltaVarint,
} from '../../src/compress/index-coding.js';
import { codeOf } from '../support/error-code.js';

const compressErrorCode = (action: () => unknown): string => codeOf(action, CompressError);

function roundTrip(indices: Uint32Array): Uint8Array {
  const bytes = encodeIndicesDeltaVarint(indices);
  expect(bytes.length).toBe(deltaVarintByteLength(indices));
  expect(decodeIndicesDeltaVarint(bytes, indices.length)).toEqual(indices);
  return bytes;
}

describe('delta varint index coding', () => {
  it('codes single numbers as unsigned LEB128', () => {
    // Unsigned LEB128 examples of the DWARF Debugging Information Format, version 4, section
    // 7.6 (values recalled from memory; each is easy to recheck by hand): 2 -> 02, 127 -> 7f,
    // 128 -> 80 01, 129 -> 81 01, 12857 -> b9 64. A single index is coded as itself.
    const cases: [number, number[]][] = [
      [2, [0x02]],
      [127, [0x7f]],
      [128, [0x80, 0x01]],
      [129, [0x81, 0x01]],
      [12857, [0xb9, 0x64]],
      [0xffffffff, [0xff, 0xff, 0xff, 0xff, 0x0f]],
    ];
    for (const [value, bytes] of cases) {
      expect(Array.from(roundTrip(Uint32Array.of(value)))).toEqual(bytes);
    }
  });

  it('codes the gaps minus one after the first index', () => {
    // [2, 130]: 2, then 130 - 2 - 1 = 127; consecutive indices cost one zero byte each.
    expect(Array.from(roundTrip(Uint32Array.of(2, 130)))).toEqual([0x02, 0x7f]);
    expect(Array.from(roundTrip(Uint32Array.of(5, 6, 7)))).toEqual([0x05, 0x00, 0x00]);
  });

  it('round-trips the edge cases', () => {
    const d = 1000;
    expect(roundTrip(new Uint32Array(0)).length).toBe(0);
    roundTrip(Uint32Array.of(0));
    roundTrip(Uint32Array.of(d - 1));
    roundTrip(Uint32Array.of(0, d - 1));
    roundTrip(Uint32Array.from({ length: d }, (_, j) => j));
    roundTrip(Uint32Array.of(0, 2 ** 31, 0xfffffffe, 0xffffffff));
    roundTrip(
      Uint32Array.of(127, 128, 16_383, 16_384, 2_097_151, 2_097_152, 268_435_455, 268_435_456),
    );
  });

  it('round-trips random index sets of every density', () => {
    const rng = Rng.derive(5, 'index sets');
    for (let trial = 0; trial < 200; trial++) {
      const d = 1 + rng.nextInt(trial % 2 === 0 ? 500 : 5_000_000);
      const k = rng.nextInt(Math.min(d, 2000) + 1);
      roundTrip(rng.sampleWithoutReplacement(d, k));
    }
  });

  it('refuses indices that are not strictly increasing', () => {
    expect(compressErrorCode(() => encodeIndicesDeltaVarint(Uint32Array.of(3, 1)))).toBe(
      'E_COMPRESS_INDEX_ORDER',
    );
    expect(compressErrorCode(() => encodeIndicesDeltaVarint(Uint32Array.of(4, 4)))).toBe(
      'E_COMPRESS_INDEX_ORDER',
    );
    expect(compressErrorCode(() => deltaVarintByteLength(Uint32Array.of(9, 2)))).toBe(
      'E_COMPRESS_INDEX_ORDER',
    );
  });

  it('rejects malformed bytes with a stable code', () => {
    expect(compressErrorCode(() => decodeIndicesDeltaVarint(Uint8Array.of(0x80), 1))).toBe(
      'E_COMPRESS_VARINT',
    );
    expect(compressErrorCode(() => decodeIndicesDeltaVarint(Uint8Array.of(0x01, 0x02), 1))).toBe(
      'E_COMPRESS_VARINT',
    );
    expect(compressErrorCode(() => decodeIndicesDeltaVarint(Uint8Array.of(0x81, 0x00), 1))).toBe(
      'E_COMPRESS_VARINT',
    );
    expect(
      compressErrorCode(() =>
        decodeIndicesDeltaVarint(Uint8Array.of(0xff, 0xff, 0xff, 0xff, 0x10), 1),
      ),
    ).toBe('E_COMPRESS_VARINT');
    expect(
      compressErrorCode(() =>
        decodeIndicesDeltaVarint(Uint8Array.of(0x80, 0x80, 0x80, 0x80, 0x80, 0x01), 1),
      ),
    ).toBe('E_COMPRESS_VARINT');
    expect(compressErrorCode(() => decodeIndicesDeltaVarint(Uint8Array.of(0x01), 2))).toBe(
      'E_COMPRESS_VARINT',
    );
    expect(compressErrorCode(() => decodeIndicesDeltaVarint(Uint8Array.of(0x01), -1))).toBe(
      'E_COMPRESS_VARINT',
    );
    // 0xffffffff then a gap of 0: the next index would be 2^32.
    expect(
      compressErrorCode(() =>
        decodeIndicesDeltaVarint(Uint8Array.of(0xff, 0xff, 0xff, 0xff, 0x0f, 0x00), 2),
      ),
    ).toBe('E_COMPRESS_INDEX_RANGE');
  });
});
