import { describe, expect, it } from 'vitest';
import { deltaVarintByteLength } from '../../src/compress/index-coding.js';
import { Rng } from '../../src/base/rng.js';
import { encodeMessage } from '../../src/protocol/codec.js';
import {
  controlFrameBytesMax,
  roundFrameBytesMaxFor,
  HANDSHAKE_LIMITS,
  helloFrameBytesMax,
  limitsForPlan,
  pendingBytesMaxFor,
  protocolLimitsSchema,
} from '../../src/protocol/limits.js';
import { PROTOCOL_ERROR_CODES } from '../../src/protocol/errors.js';
import {
  NAME_LENGTH_MAX,
  PROOF_BYTES,
  PROTOCOL_VERSION,
  RESUME_TOKEN_BYTES,
  type WireFields,
} from '../../src/protocol/messages.js';
import type { FieldDims } from '../../src/protocol/field-dims.js';
import { toWire } from '../../src/protocol/wire-vector.js';
import { encodeRoundFrame } from '../../src/protocol/round-frame-encode.js';

const longName = (letter: string) => letter + 'x'.repeat(NAME_LENGTH_MAX - 1);

/** Every entry carried sparsely, with an index: the largest legal form of a vector (see limits.ts). */
function worstFields(fields: Readonly<Record<string, number>>): WireFields {
  const out: WireFields = {};
  for (const [name, dim] of Object.entries(fields)) {
    const indices = Uint32Array.from({ length: dim }, (_, j) => j);
    const values = new Float64Array(dim).fill(-Number.MAX_VALUE);
    out[name] = toWire({ dim, indices, values });
  }
  return out;
}

describe('roundFrameBytesMaxFor', () => {
  const dims = { [longName('d')]: 30_000, [longName('c')]: 10_000 };
  const fieldDims: FieldDims = { [longName('e')]: dims, small: { [longName('g')]: 10 } };
  const entriesMax = 3;
  const limit = roundFrameBytesMaxFor(fieldDims, entriesMax);
  const big = Number.MAX_SAFE_INTEGER;

  it('holds the largest legal ups and downs frames the real encoder writes, with a few KiB of headroom', () => {
    const clientIds = Array.from({ length: entriesMax }, (_, i) => big - i);
    const ups = encodeRoundFrame(
      {
        type: 'ups',
        round: big,
        exchange: longName('e'),
        entries: clientIds.map((clientId) => ({
          clientId,
          fields: worstFields(dims),
          localSteps: big,
          computeSeconds: Number.MAX_VALUE,
          waitSeconds: Number.MAX_VALUE,
          transferSeconds: Number.MAX_VALUE,
        })),
      },
      fieldDims,
    );
    // The most a downs frame holds: one field common, the other in every entry.
    const [first, second] = Object.keys(dims);
    const downs = encodeRoundFrame(
      {
        type: 'downs',
        round: big,
        exchange: longName('e'),
        deadlineSeconds: Number.MAX_VALUE,
        common: { [first]: worstFields(dims)[first] },
        entries: clientIds.map((clientId) => ({
          clientId,
          localSteps: big,
          stepSize: Number.MAX_VALUE,
          fields: { [second]: worstFields(dims)[second] },
        })),
      },
      fieldDims,
    );
    for (const frame of [ups, downs]) expect(frame.length).toBeLessThanOrEqual(limit);
    // Every entry carrying every field: the bound is that plus one more entry (a downs frame's
    // common section) and the envelope's room.
    expect(limit - ups.length).toBeLessThan(4096 + 4096 + 9 * 40_000);
  });

  it('never falls below a control frame, so errors always fit', () => {
    expect(roundFrameBytesMaxFor({ local: { delta: 1 } }, 1)).toBe(64 * 1024);
    expect(roundFrameBytesMaxFor({}, 1)).toBe(64 * 1024);
  });

  it('refuses dimensions that are not positive integers, and a frame without entries', () => {
    expect(() => roundFrameBytesMaxFor({ local: { delta: 0 } }, 1)).toThrow(RangeError);
    expect(() => roundFrameBytesMaxFor({ local: { delta: 2.5 } }, 1)).toThrow(RangeError);
    expect(() => roundFrameBytesMaxFor({ local: { delta: 2 } }, 0)).toThrow(RangeError);
  });
});

describe('the index bound behind the frame limit: delta varint bytes of any subset of [0, d) are at most d', () => {
  it('is met with equality by the full set and never exceeded by seeded subsets of every density', () => {
    const d = 50_000;
    expect(deltaVarintByteLength(Uint32Array.from({ length: d }, (_, j) => j))).toBe(d);
    const rng = Rng.derive(11, 'protocol', 'index-bound');
    for (const density of [1e-4, 1e-3, 0.0078, 0.0079, 0.01, 0.1, 0.5, 0.99]) {
      const kept: number[] = [];
      for (let j = 0; j < d; j++) if (rng.nextFloat() < density) kept.push(j);
      expect(deltaVarintByteLength(Uint32Array.from(kept))).toBeLessThanOrEqual(d);
    }
  });

  it('is not exceeded by gaps at the LEB128 length steps (DWARF 4 section 7.6: 7 bits a byte)', () => {
    const d = 1_000_000;
    for (const gap of [128, 129, 16_384, 16_385]) {
      const indices = Uint32Array.from(
        { length: Math.floor(d / gap) },
        (_, i) => i * gap + gap - 1,
      );
      expect(deltaVarintByteLength(indices)).toBeLessThanOrEqual(d);
    }
  });
});

describe('limitsForPlan', () => {
  it('takes fields, dimensions and frame size from both directions', () => {
    const limits = limitsForPlan({
      downFieldDims: { local: { model: 40, control: 40 } },
      upFieldDims: { local: { delta: 40, control: 40, extra: 70_000 } },
      clientsPerWorker: 3,
    });
    expect(limits.maxFieldsPerMessage).toBe(3);
    expect(limits.maxVectorDim).toBe(70_000);
    expect(limits.maxClientsPerWorker).toBe(3);
    expect(limits.maxFrameBytes).toBe(
      roundFrameBytesMaxFor({ local: { delta: 40, control: 40, extra: 70_000 } }, 3),
    );
    expect(protocolLimitsSchema.safeParse(limits).success).toBe(true);
  });

  it('gives limits the schema accepts, handshake included', () => {
    expect(protocolLimitsSchema.safeParse(HANDSHAKE_LIMITS).success).toBe(true);
  });

  it('refuses a worker without clients', () => {
    expect(() =>
      limitsForPlan({ downFieldDims: {}, upFieldDims: {}, clientsPerWorker: 0 }),
    ).toThrow(RangeError);
  });
});

describe('helloFrameBytesMax', () => {
  // Three UTF-8 bytes for U+20AC (RFC 3629 section 3): a name at the length limit in such
  // characters is the longest a hello can carry.
  const longestName = '\u20ac'.repeat(HANDSHAKE_LIMITS.maxWorkerNameLength);
  const largestHello = {
    type: 'hello' as const,
    protocolVersion: PROTOCOL_VERSION,
    workerName: longestName,
    capacity: HANDSHAKE_LIMITS.maxClientsPerWorker,
    proof: new Uint8Array(PROOF_BYTES),
    resume: new Uint8Array(RESUME_TOKEN_BYTES),
  };

  it('holds the largest legal hello the real encoder writes', () => {
    expect(encodeMessage(largestHello).byteLength).toBeLessThanOrEqual(helloFrameBytesMax());
  });

  it('exceeds it only by the numbers the encoder writes shorter than 9 bytes', () => {
    // MessagePack spec, "formats": the version (under 128) is a 1-byte positive fixint and a
    // capacity of 10,000 a 3-byte uint16; the bound allows 9 bytes for each.
    const slackBytes = 9 - 1 + (9 - 3);
    expect(helloFrameBytesMax() - encodeMessage(largestHello).byteLength).toBe(slackBytes);
  });
});

describe('controlFrameBytesMax', () => {
  const limits = limitsForPlan({
    downFieldDims: { local: { x: 20 } },
    upFieldDims: { local: { delta: 20 } },
    clientsPerWorker: 4,
  });

  it('is met exactly by the largest error (the longest code, the longest text in 3-byte characters)', () => {
    const longestCode = [...PROTOCOL_ERROR_CODES].sort((a, b) => b.length - a.length)[0];
    const error = encodeMessage({
      type: 'error',
      code: longestCode,
      message: '\u20ac'.repeat(limits.maxErrorMessageLength),
    });
    expect(error.byteLength).toBe(controlFrameBytesMax(limits));
  });

  it('holds a heartbeat with the largest clock reading', () => {
    const heartbeat = encodeMessage({ type: 'heartbeat', sentAtMs: Number.MAX_VALUE });
    expect(heartbeat.byteLength).toBeLessThanOrEqual(controlFrameBytesMax(limits));
  });
});

describe('pendingBytesMaxFor', () => {
  const limits = limitsForPlan({
    downFieldDims: { local: { x: 200_000 } },
    upFieldDims: { local: { delta: 200_000 } },
    clientsPerWorker: 3,
  });
  const controlBytes = 64 * 1024;

  it('holds the downs frames of two exchanges, and room for control messages', () => {
    expect(pendingBytesMaxFor(limits, 3)).toBe(2 * limits.maxFrameBytes + controlBytes);
  });

  it("holds a resumed run's state for every client when that is more", () => {
    const stateBytes = limits.maxFrameBytes;
    expect(pendingBytesMaxFor(limits, 3, stateBytes)).toBe(3 * stateBytes + controlBytes);
  });

  it('holds the welcome before any client is dealt', () => {
    expect(pendingBytesMaxFor(HANDSHAKE_LIMITS, 0)).toBe(
      HANDSHAKE_LIMITS.maxFrameBytes + controlBytes,
    );
  });

  it('refuses a negative or fractional client count', () => {
    expect(() => pendingBytesMaxFor(limits, -1)).toThrow(RangeError);
    expect(() => pendingBytesMaxFor(limits, 1.5)).toThrow(RangeError);
  });
});
