import { describe, expect, it } from 'vitest';
import { decompress } from '../../src/compress/compressed-vector.js';
import { ProtocolError } from '../../src/protocol/errors.js';
import {
  checkWireVector,
  fromWire,
  toWire,
  type WireVector,
} from '../../src/protocol/wire-vector.js';
import { codeOf } from '../support/error-code.js';

const protocolErrorCode = (action: () => unknown): string => codeOf(action, ProtocolError);

describe('toWire / fromWire', () => {
  it('toWire views the vector bytes in place, fromWire gives arrays of their own', () => {
    // Every platform Node runs on is little-endian: the wire form is the memory form there.
    const values = Float64Array.from([1.5, -2, 3e-310]);
    const wv = toWire({ dim: 3, indices: null, values });
    expect(wv.values.buffer).toBe(values.buffer);
    expect(wv.values.byteOffset).toBe(values.byteOffset);
    const back = fromWire(wv);
    expect(back.values.buffer).not.toBe(values.buffer);
    expect(Array.from(back.values)).toEqual([1.5, -2, 3e-310]);
  });

  it('round-trips dense and sparse vectors at both widths', () => {
    const cases = [
      { dim: 4, indices: null, values: Float64Array.from([1, -0, 3e-310, -4]) },
      { dim: 4, indices: null, values: Float32Array.from([1, -0, 2 ** -140, -4]) },
      {
        dim: 1000,
        indices: Uint32Array.from([0, 1, 129, 999]),
        values: Float64Array.from([1, 2, 3, 4]),
      },
      { dim: 1000, indices: Uint32Array.from([7]), values: Float32Array.from([-0.5]) },
      { dim: 10, indices: new Uint32Array(0), values: new Float64Array(0) },
    ];
    for (const cv of cases) {
      const wv = toWire(cv);
      expect(wv.width).toBe(cv.values.BYTES_PER_ELEMENT);
      expect(wv.count).toBe(cv.values.length);
      const back = fromWire(wv);
      expect(back.dim).toBe(cv.dim);
      expect(back.values.constructor).toBe(cv.values.constructor);
      expect(back.indices === null ? null : Array.from(back.indices)).toEqual(
        cv.indices === null ? null : Array.from(cv.indices),
      );
      expect(new Uint8Array(back.values.buffer)).toEqual(
        new Uint8Array(cv.values.buffer, cv.values.byteOffset, cv.values.byteLength),
      );
      expect(decompress(back)).toEqual(decompress(cv));
    }
  });

  it('writes values little-endian whatever the host (IEEE 754 binary64 of 1.0 is 0x3ff0000000000000)', () => {
    const wv = toWire({ dim: 1, indices: null, values: Float64Array.of(1) });
    expect(Array.from(wv.values)).toEqual([0, 0, 0, 0, 0, 0, 0xf0, 0x3f]);
  });

  it('codes indices as first index then gaps minus one, each an unsigned LEB128 (DWARF 4 section 7.6; protobuf encoding guide: 300 is AC 02)', () => {
    // indices 0, 1, 302: gaps minus one are 0, 0, 300.
    const wv = toWire({
      dim: 400,
      indices: Uint32Array.from([0, 1, 302]),
      values: new Float64Array(3),
    });
    expect(Array.from(wv.indices!)).toEqual([0x00, 0x00, 0xac, 0x02]);
  });

  it('returns fresh arrays that share no memory with the wire bytes', () => {
    const wv = toWire({ dim: 3, indices: null, values: Float64Array.from([1, 2, 3]) });
    const back = fromWire(wv);
    wv.values.fill(0);
    expect(Array.from(back.values)).toEqual([1, 2, 3]);
  });
});

describe('values wherever they sit in a frame', () => {
  // A decoded bin is a view into the frame at any byte offset (codec.ts: msgpackr copies no
  // buffers), and a typed array sent may itself be a view into a larger buffer. The values span
  // IEEE 754's range: negative zero, the smallest subnormal, near the largest finite magnitude.
  const values64 = Float64Array.from([1.5, -0, 2 ** -1074, -1e308, Math.PI]);
  const values32 = Float32Array.from([1.5, -0, 2 ** -149, -3e38, Math.fround(Math.PI)]);

  /** The wire vector's value bytes copied into a larger buffer at `offset`. */
  function atOffset(wv: WireVector, offset: number): WireVector {
    const frame = new Uint8Array(offset + wv.values.byteLength + 3);
    frame.set(wv.values, offset);
    return { ...wv, values: frame.subarray(offset, offset + wv.values.byteLength) };
  }

  for (const values of [values64, values32]) {
    it(`reads ${values.constructor.name} values at every byte offset bit for bit`, () => {
      const wv = toWire({ dim: values.length, indices: null, values });
      for (let offset = 0; offset < 16; offset++) {
        const placed = atOffset(wv, offset);
        checkWireVector(placed);
        const back = fromWire(placed);
        expect(back.values.byteOffset % back.values.BYTES_PER_ELEMENT).toBe(0);
        expect(new Uint8Array(back.values.buffer)).toEqual(
          new Uint8Array(values.buffer, values.byteOffset, values.byteLength),
        );
      }
    });

    it(`refuses a ${values.constructor.name} NaN at every byte offset with E_NOT_FINITE`, () => {
      const wv = toWire({ dim: values.length, indices: null, values });
      const view = new DataView(wv.values.buffer, wv.values.byteOffset);
      if (wv.width === 8) view.setFloat64(3 * 8, Infinity, true);
      else view.setFloat32(3 * 4, NaN, true);
      for (let offset = 0; offset < 16; offset++) {
        const placed = atOffset(wv, offset);
        expect(protocolErrorCode(() => checkWireVector(placed))).toBe('E_NOT_FINITE');
        expect(protocolErrorCode(() => fromWire(placed))).toBe('E_NOT_FINITE');
      }
    });
  }

  it('sends the values of a typed array that is a view into a larger buffer', () => {
    const whole = Float64Array.from([9, 1, 2, 3, 9]);
    const wv = toWire({ dim: 3, indices: null, values: whole.subarray(1, 4) });
    expect(wv.values.byteLength).toBe(24);
    expect(Array.from(fromWire(wv).values)).toEqual([1, 2, 3]);
  });
});

describe('checks on a wire vector from a peer', () => {
  function dense(values: number[]): WireVector {
    return toWire({ dim: values.length, indices: null, values: Float64Array.from(values) });
  }

  const faults: [string, () => WireVector, string][] = [
    ['width other than 4 or 8', () => ({ ...dense([1, 2]), width: 2 as 8 }), 'E_TYPE'],
    ['dimension 0', () => ({ ...dense([1]), dim: 0 }), 'E_DIMENSION'],
    ['fractional dimension', () => ({ ...dense([1]), dim: 1.5 }), 'E_DIMENSION'],
    ['dense form with count below dim', () => ({ ...dense([1, 2]), count: 1 }), 'E_DIMENSION'],
    [
      'count above dim',
      () => ({
        ...toWire({ dim: 2, indices: Uint32Array.of(1), values: Float64Array.of(1) }),
        count: 3,
      }),
      'E_DIMENSION',
    ],
    [
      'value bytes not count * width',
      () => ({ ...dense([1, 2]), values: new Uint8Array(15) }),
      'E_DIMENSION',
    ],
    ['index at the dimension', () => toWireUnchecked(5, [0, 5], 8), 'E_DIMENSION'],
    [
      'fewer indices than count',
      () => ({
        ...toWire({ dim: 9, indices: Uint32Array.of(1, 2), values: Float64Array.of(1, 2) }),
        count: 3,
        values: new Uint8Array(24),
      }),
      'E_DIMENSION',
    ],
    ['index bytes left over', () => withIndexBytes([0x01, 0x01, 0x01], 2), 'E_DIMENSION'],
    ['truncated varint', () => withIndexBytes([0x01, 0x80], 2), 'E_DIMENSION'],
    ['overlong varint (0 coded as 80 00)', () => withIndexBytes([0x80, 0x00], 1), 'E_DIMENSION'],
    [
      'varint beyond 32 bits',
      () => withIndexBytes([0xff, 0xff, 0xff, 0xff, 0x7f], 1),
      'E_DIMENSION',
    ],
    ['NaN value', () => nanAt(1), 'E_NOT_FINITE'],
  ];

  /** A sparse f64 vector with the given raw index bytes and `count` zero values. */
  function withIndexBytes(indexBytes: number[], count: number): WireVector {
    return {
      dim: 1000,
      indices: Uint8Array.from(indexBytes),
      count,
      values: new Uint8Array(count * 8),
      width: 8,
    };
  }

  /** Sparse indices coded without toWire's own checks, as a faulty peer might send them. */
  function toWireUnchecked(dim: number, indices: number[], width: 4 | 8): WireVector {
    const good = toWire({
      dim: Math.max(...indices) + 1,
      indices: Uint32Array.from(indices),
      values: new Float64Array(indices.length),
    });
    return { ...good, dim, width, values: new Uint8Array(indices.length * width) };
  }

  function nanAt(position: number): WireVector {
    const wv = dense([1, 2, 3]);
    new DataView(wv.values.buffer).setFloat64(position * 8, NaN, true);
    return wv;
  }

  for (const [name, make, code] of faults) {
    it(`${name} -> ${code}, from checkWireVector and fromWire alike`, () => {
      expect(protocolErrorCode(() => checkWireVector(make()))).toBe(code);
      expect(protocolErrorCode(() => fromWire(make()))).toBe(code);
    });
  }

  it('names the field path in the message', () => {
    expect(() => fromWire(nanAt(2), 'up.fields.delta')).toThrow(
      'up.fields.delta.values: value 2 is NaN',
    );
  });
});

describe('checks on the sending side', () => {
  it('refuses unsorted or duplicate indices, indices out of range and count mismatches with E_DIMENSION', () => {
    const values = Float64Array.of(1, 2);
    expect(protocolErrorCode(() => toWire({ dim: 9, indices: Uint32Array.of(3, 1), values }))).toBe(
      'E_DIMENSION',
    );
    expect(protocolErrorCode(() => toWire({ dim: 9, indices: Uint32Array.of(3, 3), values }))).toBe(
      'E_DIMENSION',
    );
    expect(protocolErrorCode(() => toWire({ dim: 9, indices: Uint32Array.of(3, 9), values }))).toBe(
      'E_DIMENSION',
    );
    expect(protocolErrorCode(() => toWire({ dim: 9, indices: Uint32Array.of(3), values }))).toBe(
      'E_DIMENSION',
    );
    expect(protocolErrorCode(() => toWire({ dim: 3, indices: null, values }))).toBe('E_DIMENSION');
  });
});
