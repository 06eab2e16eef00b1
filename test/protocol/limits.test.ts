import { describe, expect, it } from 'vitest';
import { deltaVarintByteLength } from '../../src/compress/index-coding.js';
import { Rng } from '../../src/base/rng.js';
import { encodeMessage } from '../../src/protocol/codec.js';
import {
  frameLimitBytesFor,
  HANDSHAKE_LIMITS,
  limitsForPlan,
  protocolLimitsSchema,
} from '../../src/protocol/limits.js';
import { NAME_LENGTH_MAX, type WireFields } from '../../src/protocol/messages.js';
import type { FieldDims } from '../../src/protocol/field-dims.js';
import { toWire } from '../../src/protocol/wire-vector.js';

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

describe('frameLimitBytesFor', () => {
  const dims = { [longName('d')]: 30_000, [longName('c')]: 10_000 };
  const fieldDims: FieldDims = { [longName('e')]: dims, small: { [longName('g')]: 10 } };
  const limit = frameLimitBytesFor(fieldDims);
  const big = Number.MAX_SAFE_INTEGER;

  it('holds the largest legal up and down the real encoder writes, with a few KiB of headroom', () => {
    const up = encodeMessage({
      type: 'up',
      round: big,
      exchange: longName('e'),
      clientId: big,
      fields: worstFields(dims),
      localSteps: big,
      computeSeconds: Number.MAX_VALUE,
      waitSeconds: Number.MAX_VALUE,
      transferSeconds: Number.MAX_VALUE,
    });
    const down = encodeMessage({
      type: 'down',
      round: big,
      exchange: longName('e'),
      clientId: big,
      localSteps: big,
      stepSize: Number.MAX_VALUE,
      fields: worstFields(dims),
      deadlineSeconds: Number.MAX_VALUE,
    });
    for (const frame of [up, down]) {
      expect(frame.length).toBeLessThanOrEqual(limit);
      expect(limit - frame.length).toBeLessThan(4096);
    }
  });

  it('never falls below a control frame, so errors always fit', () => {
    expect(frameLimitBytesFor({ local: { delta: 1 } })).toBe(64 * 1024);
    expect(frameLimitBytesFor({})).toBe(64 * 1024);
  });

  it('refuses dimensions that are not positive integers', () => {
    expect(() => frameLimitBytesFor({ local: { delta: 0 } })).toThrow(RangeError);
    expect(() => frameLimitBytesFor({ local: { delta: 2.5 } })).toThrow(RangeError);
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
      frameLimitBytesFor({ local: { delta: 40, control: 40, extra: 70_000 } }),
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
