import { Packr, pack } from 'msgpackr';
import { describe, expect, it } from 'vitest';
import { Rng } from '../../src/base/rng.js';
import {
  decodeMessage,
  encodeMessage,
  FrameElements,
  NESTING_DEPTH_MAX,
} from '../../src/protocol/codec.js';
import { ProtocolError } from '../../src/protocol/errors.js';
import { HANDSHAKE_LIMITS } from '../../src/protocol/limits.js';
import type { DownsFrame, UpsFrame } from '../../src/protocol/messages.js';
import { encodeRoundFrame } from '../../src/protocol/round-frame-encode.js';
import { receiveMessage } from '../../src/protocol/receive.js';
import { fromWire, toWire, type WireVector } from '../../src/protocol/wire-vector.js';
import type { FieldDims } from '../../src/protocol/index.js';
import {
  contextFor,
  DIM,
  DOWN_FIELD_DIMS,
  encodeSample,
  plain,
  sampleMessages,
  serverContext,
  UP_FIELD_DIMS,
  workerContext,
} from './sample-messages.js';
import { codeOf } from '../support/error-code.js';

const protocolErrorCode = (action: () => unknown): string => codeOf(action, ProtocolError);

const LIMIT_BYTES = HANDSHAKE_LIMITS.maxFrameBytes;

/** The frame's bytes placed `offset` bytes into a fresh buffer, as a socket might hand them over. */
function atOffset(frame: Uint8Array, offset: number): Uint8Array {
  const shifted = new Uint8Array(new ArrayBuffer(frame.length + offset + 8), offset, frame.length);
  shifted.set(frame);
  return shifted;
}

/** An ups frame holding client 2's one-step upload of `delta` in exchange 'local'. */
function upsFrameOf(round: number, delta: WireVector, fieldDims: FieldDims): Uint8Array {
  return encodeRoundFrame(
    {
      type: 'ups',
      round,
      exchange: 'local',
      entries: [
        {
          clientId: 2,
          localSteps: 1,
          computeSeconds: 0,
          waitSeconds: 0,
          transferSeconds: 0,
          fields: { delta },
        },
      ],
    },
    fieldDims,
  );
}

describe('encodeMessage / decodeMessage', () => {
  it('round-trips every message type through encode, decode and validation', () => {
    for (const message of sampleMessages()) {
      const frame = encodeSample(message);
      const received = receiveMessage(frame, contextFor(message));
      if (received.type === 'ups') {
        // Each entry's bytes as received: together with the envelope, the whole frame.
        const { entryBytes, ...rest } = received;
        expect(entryBytes!.length).toBe(received.entries.length);
        expect(entryBytes!.reduce((a, b) => a + b, 0)).toBeLessThan(frame.byteLength);
        expect(plain(rest)).toEqual(plain(message));
        continue;
      }
      expect(plain(received)).toEqual(plain(message));
    }
  });

  it('writes plain MessagePack maps, no record extension (MessagePack spec: fixmap, fixstr, float 64)', () => {
    const frame = encodeMessage({ type: 'heartbeat', sentAtMs: 1234.5 });
    // fixmap of 2 (0x82); fixstr 'type' (0xa4); fixstr 'heartbeat' (0xa9); fixstr 'sentAtMs'
    // (0xa8); float 64 (0xcb) big-endian. 1234.5 = 0x40934a0000000000 in IEEE 754 binary64.
    const expected = [
      0x82,
      0xa4,
      ...Buffer.from('type'),
      0xa9,
      ...Buffer.from('heartbeat'),
      0xa8,
      ...Buffer.from('sentAtMs'),
      0xcb,
      0x40,
      0x93,
      0x4a,
      0x00,
      0x00,
      0x00,
      0x00,
      0x00,
    ];
    expect(Array.from(frame)).toEqual(expected);
  });

  it('carries a vector as one bin holding its little-endian bytes (MessagePack spec: bin 8 is 0xc4, length)', () => {
    const values = Float64Array.from([1, -2, 0.5]);
    const frame = upsFrameOf(0, toWire({ dim: 3, indices: null, values }), UP_FIELD_DIMS);
    const le = Buffer.alloc(24);
    values.forEach((v, i) => le.writeDoubleLE(v, i * 8));
    const needle = Buffer.concat([Buffer.from([0xc4, 24]), le]);
    expect(Buffer.from(frame).indexOf(needle)).toBeGreaterThan(0);
  });

  it('decodes vectors at any byte offset into aligned arrays (msgpackr returns bins as views into the frame)', () => {
    const message = sampleMessages().find((m): m is DownsFrame => m.type === 'downs')!;
    const frame = encodeSample(message);
    const expected = fromWire(message.common.model);
    let unalignedSeen = 0;
    for (let offset = 0; offset < 8; offset++) {
      const received = receiveMessage(atOffset(frame, offset), workerContext()) as DownsFrame;
      const bin = received.common.model.values;
      if (bin.byteOffset % 8 !== 0) {
        unalignedSeen++;
        // ECMA-262 (TypedArray constructor with a buffer): the offset must be a multiple of the
        // element size, else RangeError. This is the trap a direct Float64Array view falls into.
        expect(() => new Float64Array(bin.buffer, bin.byteOffset, DIM)).toThrow(RangeError);
      }
      const model = fromWire(received.common.model);
      expect(model.values).toBeInstanceOf(Float64Array);
      expect(model.values.byteOffset).toBe(0);
      expect(model.values.buffer).not.toBe(bin.buffer);
      expect(Array.from(model.values)).toEqual(Array.from(expected.values));
    }
    expect(unalignedSeen).toBeGreaterThanOrEqual(7);
  });

  it('keeps f64 values bit for bit: -0, subnormals, extremes (IEEE 754 binary64; Number.MIN_VALUE per ECMA-262 6.1.6.1)', () => {
    const values = Float64Array.from([
      -0,
      0,
      Number.MIN_VALUE,
      -Number.MIN_VALUE,
      2.225073858507201e-308,
      Number.MAX_VALUE,
      -Number.MAX_VALUE,
      1 / 3,
      Math.PI,
    ]);
    const frame = upsFrameOf(3, toWire({ dim: values.length, indices: null, values }), {
      local: { delta: values.length },
    });
    const context = serverContext({
      fieldDims: { local: { delta: values.length } },
      limits: { ...serverContext().limits, maxVectorDim: values.length },
    });
    const back = fromWire(
      (receiveMessage(atOffset(frame, 3), context) as UpsFrame).entries[0].fields.delta,
    ).values;
    expect(back).toBeInstanceOf(Float64Array);
    expect(Object.is(back[0], -0)).toBe(true);
    expect(Object.is(back[1], 0)).toBe(true);
    expect(new Uint8Array(back.buffer)).toEqual(new Uint8Array(values.buffer));
  });

  it('keeps f32 values bit for bit: -0, the smallest subnormal 2^-149, the largest finite (IEEE 754 binary32)', () => {
    const values = Float32Array.from([
      -0,
      2 ** -149,
      -(2 ** -149),
      2 ** -126,
      3.4028234663852886e38,
      Math.fround(0.1),
    ]);
    const frame = encodeRoundFrame(
      {
        type: 'downs',
        round: 0,
        exchange: 'gradient',
        deadlineSeconds: null,
        common: {},
        entries: [
          {
            clientId: 5,
            localSteps: 1,
            stepSize: 1,
            fields: { model: toWire({ dim: 6, indices: null, values }) },
          },
        ],
      },
      DOWN_FIELD_DIMS,
    );
    const back = fromWire(
      (receiveMessage(atOffset(frame, 5), workerContext()) as DownsFrame).entries[0].fields.model,
    ).values;
    expect(back).toBeInstanceOf(Float32Array);
    expect(Object.is(back[0], -0)).toBe(true);
    expect(back[1]).toBe(2 ** -149);
    expect(new Uint8Array(back.buffer)).toEqual(new Uint8Array(values.buffer));
  });

  it('refuses NaN and infinities in vectors, f64 and f32, whichever end finds them', () => {
    for (const bad of [NaN, Infinity, -Infinity]) {
      for (const values of [Float64Array.from([1, bad, 2]), Float32Array.from([1, bad, 2])]) {
        expect(protocolErrorCode(() => toWire({ dim: 3, indices: null, values }))).toBe(
          'E_NOT_FINITE',
        );
        // A peer that skips the check: write the bytes by hand.
        const good = toWire({ dim: 3, indices: null, values: values.map(() => 1) });
        const view = new DataView(good.values.buffer);
        if (good.width === 8) view.setFloat64(8, bad, true);
        else view.setFloat32(4, bad, true);
        const frame = upsFrameOf(3, good, { local: { delta: 3 } });
        const context = serverContext({ fieldDims: { local: { delta: 3 } } });
        expect(protocolErrorCode(() => receiveMessage(frame, context))).toBe('E_NOT_FINITE');
      }
    }
  });

  it('refuses bytes that are not one MessagePack value with E_DECODE (MessagePack spec: 0xc1 is never used)', () => {
    const frames: Uint8Array[] = [
      Uint8Array.of(0xc1),
      Uint8Array.of(0x92, 0x01), // array of 2 holding 1 element: truncated
      Uint8Array.of(0x01, 0x02), // two values, not one
      Uint8Array.of(0xdb, 0xff, 0xff, 0xff, 0xff), // str 32 claiming 4 GiB
      new Uint8Array(0),
    ];
    for (const frame of frames)
      expect(protocolErrorCode(() => decodeMessage(frame, LIMIT_BYTES))).toBe('E_DECODE');
  });

  it('refuses seeded random bytes with E_DECODE', () => {
    const rng = Rng.derive(2024, 'protocol', 'random-frames');
    for (let trial = 0; trial < 200; trial++) {
      const frame = Uint8Array.from({ length: 64 }, () => rng.nextUint32() & 0xff);
      expect(protocolErrorCode(() => receiveMessage(frame, serverContext()))).toBe('E_DECODE');
    }
  });

  it('refuses MessagePack extensions (timestamp, undefined, typed arrays, errors) with E_DECODE', () => {
    const withMoreTypes = new Packr({ moreTypes: true, useRecords: false });
    const frames = [
      pack({ type: 'heartbeat', sentAtMs: new Date(0) }),
      Uint8Array.of(0x81, 0xa1, 0x61, 0xd4, 0x00, 0x00), // {a: undefined} via msgpackr's ext 0
      withMoreTypes.pack({ type: 'heartbeat', sentAtMs: new Float64Array(2) }),
      withMoreTypes.pack({ type: 'error', code: 'E_TYPE', message: new Error('x') }),
      withMoreTypes.pack({ type: 'welcome', plan: new Set([1]) }),
    ];
    for (const frame of frames)
      expect(protocolErrorCode(() => decodeMessage(frame, LIMIT_BYTES))).toBe('E_DECODE');
  });

  it('refuses nesting beyond the limit, and nesting deep enough to exhaust the stack, with E_DECODE', () => {
    const nested = (depth: number) => Uint8Array.from([...new Array(depth).fill(0x91), 0x01]);
    expect(decodeMessage(nested(NESTING_DEPTH_MAX), LIMIT_BYTES)).toBeDefined();
    expect(protocolErrorCode(() => decodeMessage(nested(NESTING_DEPTH_MAX + 1), LIMIT_BYTES))).toBe(
      'E_DECODE',
    );
    expect(protocolErrorCode(() => decodeMessage(nested(1_000_000), LIMIT_BYTES))).toBe('E_DECODE');
  });

  it('carries no state from one frame to the next (a record definition in one frame is not kept)', () => {
    const sequential = new Packr({ sequential: true });
    decodeMessage(sequential.pack({ x: 1, y: 2 }), LIMIT_BYTES);
    // The second frame of that stream refers to the structure by the byte 0x40, which on its
    // own is the positive fixint 64 followed by stray bytes.
    expect(
      protocolErrorCode(() => decodeMessage(sequential.pack({ x: 3, y: 4 }), LIMIT_BYTES)),
    ).toBe('E_DECODE');
    // An array comes back as its elements with their byte lengths (a round frame's entries).
    const array = decodeMessage(Uint8Array.of(0x91, 0x40), LIMIT_BYTES) as FrameElements;
    expect(array.elements).toEqual([64]);
    expect(array.elementBytes).toEqual([1]);
  });

  it('checks the frame size before decoding (E_SIZE even for garbage)', () => {
    const garbage = new Uint8Array(1025).fill(0xc1);
    expect(protocolErrorCode(() => decodeMessage(garbage, 1024))).toBe('E_SIZE');
    expect(protocolErrorCode(() => decodeMessage(garbage.subarray(0, 1024), 1024))).toBe(
      'E_DECODE',
    );
  });

  it('leaves frames it returned intact when it encodes again', () => {
    const [first, second] = sampleMessages().filter((m) => m.type === 'downs' || m.type === 'ups');
    const firstFrame = encodeSample(first);
    const copy = Array.from(firstFrame);
    encodeSample(second);
    expect(Array.from(firstFrame)).toEqual(copy);
  });
});
