import { describe, expect, it } from 'vitest';
import { Rng } from '../../src/base/rng.js';
import { CompressError } from '../../src/compress/compress-error.js';
import { decompress } from '../../src/compress/compressed-vector.js';
import { compress } from '../../src/compress/compressor.js';
import { decodeFields, UplinkEncoder } from '../../src/compress/uplink.js';
import { channelSchema } from '../../src/scenario/schema.js';

const channel = channelSchema.parse({
  default: { kind: 'none' },
  fields: {
    gradient: { kind: 'top-k', count: 2 },
    control: { kind: 'rand-k', count: 3, errorFeedback: false },
  },
});

function randomVector(rng: Rng, d: number): Float64Array {
  return Float64Array.from({ length: d }, () => rng.normal());
}

describe('UplinkEncoder', () => {
  it('applies the per-field override, else the default; exact fields arrive bit for bit', () => {
    const rng = Rng.derive(21, 'uplink');
    const encoder = new UplinkEncoder(channel);
    const delta = randomVector(rng, 8);
    const gradient = randomVector(rng, 8);
    const sent = encoder.encode({ delta, gradient });
    expect(sent.delta.indices).toBeNull();
    expect(sent.gradient.indices?.length).toBe(2);
    const decoded = decodeFields(sent);
    expect(decoded.delta).toEqual(delta);
    expect(decoded.gradient).toEqual(decompress(compress(gradient, channel.fields.gradient)));
  });

  it('keeps one error-feedback memory per field: what was held back is what was not sent', () => {
    const encoder = new UplinkEncoder(channel);
    const gradient = Float64Array.of(1, 4, -2, 3);
    const received = decodeFields(encoder.encode({ gradient })).gradient;
    // top-2 of (1, 4, -2, 3) is (4, 3) at indices 1 and 3; the memory keeps the rest.
    expect(Array.from(received)).toEqual([0, 4, 0, 3]);
    expect(Array.from(encoder.memory('gradient')!)).toEqual([1, 0, -2, 0]);
    expect(encoder.memory('delta')).toBeNull();
  });

  it('draws rand-k fields from the caller-derived Rng, so runs repeat', () => {
    const rngFor = (round: number) => (field: string) =>
      Rng.derive(21, 'compress', round, 0, field);
    const control = randomVector(Rng.derive(21, 'control'), 30);
    const a = new UplinkEncoder(channel).encode({ control }, rngFor(1));
    const b = new UplinkEncoder(channel).encode({ control }, rngFor(1));
    const c = new UplinkEncoder(channel).encode({ control }, rngFor(2));
    expect(a.control).toEqual(b.control);
    expect(a.control.indices).not.toEqual(c.control.indices);
    expect(() => new UplinkEncoder(channel).encode({ control })).toThrow(CompressError);
  });

  it('holds a field to the dimension it first had', () => {
    const encoder = new UplinkEncoder(channel);
    encoder.encode({ gradient: new Float64Array(4) });
    expect(() => encoder.encode({ gradient: new Float64Array(5) })).toThrowError(/dimension/);
  });
});

describe('decodeFields', () => {
  it('validates what it decodes', () => {
    expect(() =>
      decodeFields({ x: { dim: 3, indices: Uint32Array.of(5), values: Float64Array.of(1) } }),
    ).toThrow(CompressError);
  });
});
