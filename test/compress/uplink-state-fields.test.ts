// Uplink state fields (a value the server keeps, such as FedLin's gradient) travel as
// compressed differences against a replica on both ends. Checked against the definition: when
// the value stops changing, the server's copy converges to it exactly (top-k is a contraction,
// ||v - topk(v)||^2 <= (1 - k/d)||v||^2; Stich, Cordonnier and Jaggi, NeurIPS 2018), while
// error feedback on the value itself keeps delivering sparse caricatures of it.
import { describe, expect, it } from 'vitest';
import { Rng } from '../../src/base/rng.js';
import { UplinkDecoder, UplinkEncoder } from '../../src/compress/uplink.js';
import type { ChannelSpec } from '../../src/compress/channel.js';

const channel: ChannelSpec = {
  default: { kind: 'top-k', fraction: 0.1, errorFeedback: true, unbiased: false, values: 'f64' },
  fields: {},
};

describe('uplink state fields', () => {
  const rng = Rng.derive(5, 'test', 'uplink-state');
  const v = Float64Array.from({ length: 50 }, () => rng.normal());

  it('the server copy equals the client replica bit for bit and converges to a constant value', () => {
    const encoder = new UplinkEncoder(channel, ['gradient']);
    const decoder = new UplinkDecoder(channel, ['gradient']);
    let received: Float64Array = new Float64Array(50);
    const gaps: number[] = [];
    for (let round = 0; round < 400; round++) {
      const message = encoder.encode({ gradient: v });
      expect(message.gradient.indices).toHaveLength(5);
      received = decoder.decode(message).gradient;
      expect(
        Buffer.from(received.buffer).equals(Buffer.from(encoder.snapshot().gradient.buffer)),
      ).toBe(true);
      gaps.push(Math.hypot(...v.map((x, j) => x - received[j])));
    }
    expect(gaps[gaps.length - 1]).toBe(0);
    for (let k = 1; k < 60; k++)
      expect(gaps[k] ** 2).toBeLessThanOrEqual((1 - 0.1) * gaps[k - 1] ** 2 + 1e-24);
  });

  it('as an increment field the same value arrives as a sparse message every round', () => {
    const encoder = new UplinkEncoder(channel);
    const decoder = new UplinkDecoder(channel);
    for (let round = 0; round < 100; round++) {
      const got = decoder.decode(encoder.encode({ gradient: v })).gradient;
      expect(got.filter((x) => x !== 0).length).toBeLessThanOrEqual(5);
    }
  });

  it('snapshots round-trip the replicas exactly', () => {
    const encoder = new UplinkEncoder(channel, ['gradient']);
    encoder.encode({ gradient: v, delta: v });
    const copy = new UplinkEncoder(channel, ['gradient']);
    copy.restore(encoder.snapshot());
    const next = Float64Array.from(v, (x) => 2 * x);
    const a = encoder.encode({ gradient: next, delta: next });
    const b = copy.encode({ gradient: next, delta: next });
    expect(Array.from(a.gradient.values)).toEqual(Array.from(b.gradient.values));
    expect(Array.from(a.delta.values)).toEqual(Array.from(b.delta.values));
  });
});
