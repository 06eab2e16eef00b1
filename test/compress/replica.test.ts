import { describe, expect, it } from 'vitest';
import { Rng } from '../../src/base/rng.js';
import { CompressError } from '../../src/compress/compress-error.js';
import { decompress } from '../../src/compress/compressed-vector.js';
import { compress } from '../../src/compress/compressor.js';
import { ReplicaDecoder, ReplicaEncoder } from '../../src/compress/replica.js';
import { channelSchema } from '../../src/scenario/schema.js';
import { distanceSquared, normSquared } from '../../src/vec/kernels.js';

describe('downlink with a replica (top-k and error feedback)', () => {
  it('keeps the client equal to the server replica, and tracks the server vector once it settles', () => {
    // While v moves, the client lags; once v is fixed, v - r shrinks each round by top-k's
    // contraction, ||v - r_next||^2 <= (1 - k/d) ||v - r||^2 (Stich, Cordonnier and Jaggi,
    // NeurIPS 2018, the k-contraction property), up to the rounding of r + (v - r).
    const d = 50;
    const k = 5;
    const channel = channelSchema.parse({ default: { kind: 'top-k', count: k } });
    const server = new ReplicaEncoder(channel);
    const client = new ReplicaDecoder(channel);
    const rng = Rng.derive(31, 'downlink');
    const v = Float64Array.from({ length: d }, () => rng.normal());
    let previousGap = Infinity;
    for (let round = 0; round < 200; round++) {
      if (round < 40) for (let j = 0; j < d; j++) v[j] += 0.1 * rng.normal();
      const held = client.decode(server.encode({ model: v })).model;
      expect(held).toEqual(server.replica('model'));
      const gap = distanceSquared(v, held);
      if (round >= 40) {
        expect(gap).toBeLessThanOrEqual((1 - k / d) * previousGap + 1e-28 * normSquared(v));
      }
      previousGap = gap;
    }
    // 160 rounds at a contraction of 0.9: (0.9)^160 is about 5e-8 of the settled gap, and in
    // practice each round zeroes k entries outright, so only rounding is left.
    expect(previousGap).toBeLessThanOrEqual(1e-24 * normSquared(v));
  });

  it('returns fresh arrays: mutating what the client got does not move its replica', () => {
    const channel = channelSchema.parse({ default: { kind: 'top-k', count: 1 } });
    const server = new ReplicaEncoder(channel);
    const client = new ReplicaDecoder(channel);
    const first = client.decode(server.encode({ model: Float64Array.of(3, 1) })).model;
    first[0] = 100;
    const second = client.decode(server.encode({ model: Float64Array.of(3, 1) })).model;
    expect(Array.from(second)).toEqual([3, 1]);
  });
});

describe('downlink without a replica', () => {
  it("sends 'none' at f64 dense and exact, with no replica on either end", () => {
    const channel = channelSchema.parse({});
    const server = new ReplicaEncoder(channel);
    const client = new ReplicaDecoder(channel);
    const v = Float64Array.of(1 / 3, -0, 1e300);
    const sent = server.encode({ model: v });
    expect(sent.model.indices).toBeNull();
    expect(client.decode(sent).model).toEqual(v);
    expect(server.replica('model')).toBeNull();
  });

  it('with error feedback off gives the client C(v) as it arrives', () => {
    const spec = { kind: 'top-k', count: 2, errorFeedback: false } as const;
    const channel = channelSchema.parse({ default: spec });
    const server = new ReplicaEncoder(channel);
    const client = new ReplicaDecoder(channel);
    const v = Float64Array.of(5, -1, 4, 0.5);
    for (let round = 0; round < 3; round++) {
      expect(client.decode(server.encode({ model: v })).model).toEqual(
        decompress(compress(v, channel.default)),
      );
    }
    expect(server.replica('model')).toBeNull();
  });

  it("with 'none' at f32 and error feedback, the replica converges to v beyond f32 precision", () => {
    // Each round sends fround(v - r): the residual after round t is below 2^-24 of the last
    // (binary32 has a 24-bit significand, IEEE 754), so three rounds reach binary64 rounding.
    const channel = channelSchema.parse({ default: { kind: 'none', values: 'f32' } });
    const server = new ReplicaEncoder(channel);
    const client = new ReplicaDecoder(channel);
    const v = Float64Array.of(Math.PI, -Math.E, 1 / 3);
    let held: Float64Array = new Float64Array(3);
    for (let round = 0; round < 3; round++) held = client.decode(server.encode({ model: v })).model;
    for (let j = 0; j < 3; j++)
      expect(Math.abs(held[j] - v[j])).toBeLessThanOrEqual(4 * Number.EPSILON * Math.abs(v[j]));
  });

  it('rejects a message whose dimension differs from the replica', () => {
    const channel = channelSchema.parse({ default: { kind: 'top-k', count: 1 } });
    const client = new ReplicaDecoder(channel);
    client.decode({ model: { dim: 3, indices: Uint32Array.of(0), values: Float64Array.of(1) } });
    let code: string | undefined;
    try {
      client.decode({ model: { dim: 4, indices: Uint32Array.of(0), values: Float64Array.of(1) } });
    } catch (error) {
      code = (error as CompressError).code;
    }
    expect(code).toBe('E_COMPRESS_DIMENSION');
  });
});
