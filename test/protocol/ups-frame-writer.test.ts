// A worker's ups frame is written in one pass into one buffer (writeUpsFrame). Its bytes must be
// the codec's own encoding of the frame as one positional array (round-frame-layout.ts), in every
// form a vector takes: dense f64 and f32, sparse with an index stream, values
// in bin 8, bin 16 and bin 32 (MessagePack specification, "bin 8/16/32": up to 255 bytes, up
// to 65,535, beyond), several fields, and an entry that reports a non-finite update. Read back
// by the coordinator's receive path, every vector comes back bit for bit, each an aligned view
// of the frame's one value block.

import { describe, expect, it } from 'vitest';
import type { CompressedVector } from '../../src/compress/compressed-vector.js';
import { encodeValue } from '../../src/protocol/codec.js';
import {
  fieldSlots,
  fromWire,
  receiveMessage,
  ROUND_FRAME_KINDS,
  ROUND_FRAME_LAYOUT,
  toWire,
  writeUpsFrame,
  type UpEntry,
} from '../../src/protocol/index.js';
import { limitsForPlan } from '../../src/protocol/index.js';
import { serverContext } from './sample-messages.js';

const dense = (d: number, f32 = false): CompressedVector => {
  const values = Float64Array.from({ length: d }, (_, i) => Math.sin(i + 1) * 1e3);
  return { dim: d, indices: null, values: f32 ? Float32Array.from(values) : values };
};

const sparse = (d: number, k: number): CompressedVector => ({
  dim: d,
  indices: Uint32Array.from({ length: k }, (_, i) => i * Math.floor(d / k) + 1),
  values: Float64Array.from({ length: k }, (_, i) => -i - 0.5),
});

function entry(clientId: number, fields: Record<string, CompressedVector>): UpEntry {
  const wire = Object.fromEntries(Object.entries(fields).map(([n, cv]) => [n, toWire(cv)]));
  return {
    clientId,
    localSteps: clientId + 1,
    computeSeconds: 0.25 * clientId + 0.1,
    waitSeconds: 0,
    transferSeconds: 1e-3,
    fields: wire,
  };
}

/** The frame as one positional array, encoded whole by the codec (msgpackr). */
function codecUpsFrame(round: number, exchangeIndex: number, entries: readonly UpEntry[]) {
  return encodeValue([
    ROUND_FRAME_KINDS.ups,
    ROUND_FRAME_LAYOUT,
    round,
    exchangeIndex,
    ...entries.map((e) => [
      e.clientId,
      e.localSteps,
      e.computeSeconds,
      e.waitSeconds,
      e.transferSeconds,
      e.updateNotFinite === true
        ? null
        : fieldSlots(Object.keys(e.fields)).map((name) => {
            const wv = e.fields[name];
            return [wv.dim, wv.width, wv.count, wv.indices, wv.values];
          }),
    ]),
  ]);
}

describe('writeUpsFrame', () => {
  // bin 8: 20 f64 = 160 bytes; bin 16: 1,000 f64 = 8,000 bytes; bin 32: 9,000 f64 = 72,000 bytes.
  const cases: [string, UpEntry[]][] = [
    ['dense f64 in bin 8', [entry(0, { delta: dense(20) })]],
    [
      'dense f64 in bin 16, three clients',
      [0, 1, 2].map((id) => entry(id, { delta: dense(1000) })),
    ],
    ['dense f64 in bin 32', [entry(4, { delta: dense(9000) })]],
    ['dense f32', [entry(1, { delta: dense(300, true) })]],
    ['sparse with an index stream', [entry(2, { delta: sparse(2000, 20) })]],
    [
      'two fields (a state and an increment)',
      [entry(3, { delta: dense(50), grad: sparse(50, 5) })],
    ],
    [
      'an update reported not finite beside a normal one',
      [{ ...entry(5, {}), fields: {}, updateNotFinite: true }, entry(6, { delta: dense(30) })],
    ],
  ];

  for (const [name, entries] of cases) {
    it(`writes the codec's bytes of the whole frame: ${name}`, () => {
      const written = writeUpsFrame(9, 0, entries);
      const encoded = codecUpsFrame(9, 0, entries);
      expect(Buffer.from(written).equals(Buffer.from(encoded))).toBe(true);
      // A plain Uint8Array, which a WebSocket client masks in place instead of copying.
      expect(Buffer.isBuffer(written)).toBe(false);
    });
  }

  it('reads back bit for bit through the receive path, each vector an aligned view of one block', () => {
    const vectors = [dense(1000), dense(1000), dense(1000)];
    const entries = vectors.map((v, id) => entry(id, { delta: v }));
    const bytes = writeUpsFrame(3, 0, entries);
    const fieldDims = { local: { delta: 1000 } };
    const frame = receiveMessage(
      bytes,
      serverContext({
        limits: limitsForPlan({
          downFieldDims: fieldDims,
          upFieldDims: fieldDims,
          clientsPerWorker: 3,
        }),
        ownedClientIds: new Set([0, 1, 2]),
        fieldDims,
      }),
    );
    if (frame.type !== 'ups') throw new Error('not an ups frame');
    const decoded = frame.entries.map((e) => fromWire(e.fields.delta).values);
    decoded.forEach((values, i) => {
      expect(values).toBeInstanceOf(Float64Array);
      expect(values.byteOffset % 8).toBe(0);
      expect(Buffer.from(values.buffer, values.byteOffset, values.byteLength)).toEqual(
        Buffer.from(vectors[i].values.buffer),
      );
    });
    // One block for the frame, sharing nothing with the frame's bytes.
    expect(new Set(decoded.map((v) => v.buffer)).size).toBe(1);
    expect(decoded[0].buffer).not.toBe(bytes.buffer);
    // A second decode of the same wire vector is a fresh array of its own.
    const again = fromWire(frame.entries[0].fields.delta).values;
    expect(again.buffer).not.toBe(decoded[0].buffer);
    expect(Array.from(again)).toEqual(Array.from(vectors[0].values));
  });
});
