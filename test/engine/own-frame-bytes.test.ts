// The bytes a client's link is charged for are those of a round frame holding its entry alone,
// as the protocol's encoder writes it and RFC 6455 section 5.2 frames it (a worker's frames
// masked, section 5.3). Checked against frames built the way the coordinator and a worker build
// them (encodeRoundFrame), and against the MessagePack sizes of the vectors they carry
// (MessagePack specification, "bin 8/16/32": a 2-, 3- or 5-byte header before the bytes).

import { describe, expect, it } from 'vitest';
import type { CompressedVector } from '../../src/compress/compressed-vector.js';
import { ownDownFrameBytes, ownUpFrameBytes } from '../../src/engine/own-frame-bytes.js';
import {
  assembleDownsFrame,
  encodeDownEntry,
  encodeDownsPrefix,
  encodeRoundFrame,
  frameBytes,
  toWire,
  writeUpsFrame,
} from '../../src/protocol/index.js';

const dense = (d: number): CompressedVector => ({
  dim: d,
  indices: null,
  values: Float64Array.from({ length: d }, (_, i) => i / 3),
});

const assignment = { clientId: 3, localSteps: 5, stepSize: 0.125 };

describe('own frame bytes', () => {
  it('are the wire bytes of a downs frame holding the client alone', () => {
    const x = dense(40);
    const fieldDims = { local: { x: 40 } };
    // The coordinator sends a field every client receives alike in the common section.
    const frame = encodeRoundFrame(
      {
        type: 'downs',
        round: 7,
        exchange: 'local',
        deadlineSeconds: null,
        common: { x: toWire(x) },
        entries: [{ ...assignment, fields: {} }],
      },
      fieldDims,
    );
    expect(ownDownFrameBytes(7, 0, null, assignment, { x })).toBe(
      frameBytes(frame.byteLength, false),
    );
  });

  it('are the wire bytes of a masked ups frame holding the client alone, its seconds as float64', () => {
    const delta = dense(300);
    const frame = encodeRoundFrame(
      {
        type: 'ups',
        round: 2,
        exchange: 'local',
        entries: [
          {
            clientId: 3,
            localSteps: 4,
            computeSeconds: 0.0123,
            waitSeconds: 1.5,
            transferSeconds: 0.25,
            fields: { delta: toWire(delta) },
          },
        ],
      },
      { local: { delta: 300 } },
    );
    expect(ownUpFrameBytes(2, 0, 3, 4, { delta })).toBe(frameBytes(frame.byteLength, true));
  });

  it('size every bin form and index stream as the encoder writes them, without writing them', () => {
    const vectors: Record<string, CompressedVector> = {
      // 160 value bytes: bin 8
      small: dense(20),
      // 80,000 value bytes: bin 32
      large: dense(10_000),
      // f32 values and a varint index stream with gaps of one byte and of several
      sparse: {
        dim: 100_000,
        indices: Uint32Array.of(0, 1, 200, 70_000, 99_999),
        values: Float32Array.of(1, -2, 3.5, 4, 5),
      },
    };
    for (const [name, cv] of Object.entries(vectors)) {
      const fields = { [name]: cv };
      const up = writeUpsFrame(1, 0, [
        {
          clientId: 300,
          localSteps: 70_000,
          computeSeconds: 0.5,
          waitSeconds: 0.5,
          transferSeconds: 0.5,
          fields: { [name]: toWire(cv) },
        },
      ]);
      expect(ownUpFrameBytes(1, 0, 300, 70_000, fields), name).toBe(
        frameBytes(up.byteLength, true),
      );
      const prefix = encodeDownsPrefix(1, 0, 2.5, [name], {});
      const down = encodeDownEntry(
        { clientId: 300, localSteps: 70_000, stepSize: 0.1, fields: { [name]: toWire(cv) } },
        prefix,
      );
      expect(
        ownDownFrameBytes(1, 0, 2.5, { clientId: 300, localSteps: 70_000, stepSize: 0.1 }, fields),
        name,
      ).toBe(frameBytes(assembleDownsFrame(prefix, [down]).byteLength, false));
    }
  });

  it('price what the codec writes beyond the information: headers around 8 bytes a value', () => {
    const up = ownUpFrameBytes(1, 0, 0, 1, { delta: dense(1000) });
    // 8,000 value bytes in a bin 16 (3-byte header), a masked frame with a 16-bit length
    // (2 + 2 + 4 bytes); the rest is the frame's and the entry's few small numbers.
    expect(up).toBeGreaterThan(8000 + 3 + 8);
    expect(up).toBeLessThan(8000 + 100);
    // A top-k vector of 10 entries costs its varint-coded indices and 10 values, not d.
    const sparse: CompressedVector = {
      dim: 1000,
      indices: Uint32Array.of(0, 5, 17, 130, 400, 401, 650, 700, 998, 999),
      values: new Float64Array(10).fill(1),
    };
    const sparseUp = ownUpFrameBytes(1, 0, 0, 1, { delta: sparse });
    expect(sparseUp).toBeGreaterThan(80 + 10);
    expect(sparseUp).toBeLessThan(80 + 10 + 100);
  });
});
