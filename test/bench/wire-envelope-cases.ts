// The wire suite of `npm run bench`: how many bytes one upload puts on the socket beside the
// information it carries. One client's upload alone in a real `ups` frame is encoded with the
// protocol's public encoder (src/protocol/index.ts) and framed as a worker sends it: RFC 6455
// section 5.2 header, masked (section 5.3: every frame from a client is masked). A top-k upload is measured against the
// information bound of its content, k values plus log2 C(d, k) bits for which k of d positions
// (the entropy of a uniform k-subset, common practice); a dense upload against its payload, d
// values. Both are sizes, computed once: no timing.

import { Rng } from '../../src/base/rng.js';
import { compress } from '../../src/compress/compressor.js';
import type { CompressedVector } from '../../src/compress/compressed-vector.js';
import { informationBoundBits, payloadBytes } from '../../src/compress/payload-bytes.js';
import { encodeRoundFrame, frameHeaderBytes, toWire } from '../../src/protocol/index.js';
import { benchTarget, type BenchResult } from './bench-report.js';

export interface WireEnvelopeSizes {
  sparse: { d: number; k: number };
  dense: { d: number };
}

export const FULL_WIRE_SIZES: WireEnvelopeSizes = {
  sparse: { d: 10_000, k: 100 },
  dense: { d: 10_000 },
};

/** The bounds the envelope is meant to stay within (scale work, issue 11). */
export const WIRE_TARGETS = { sparseOverBound: 1.15, denseOverPayload: 1.002 };

const F64_BYTES = 8;

/**
 * Bytes one client's upload puts on the socket alone in its worker's `ups` frame (protocol 4:
 * one frame per worker per exchange): the encoded frame and its header.
 */
export function upWireBytes(update: CompressedVector): number {
  // A round and client id past the one-byte integers, and timings that are not round numbers,
  // as a long run's ups are.
  const encoded = encodeRoundFrame(
    {
      type: 'ups',
      round: 1_234,
      exchange: 'local',
      entries: [
        {
          clientId: 987,
          fields: { delta: toWire(update, 'delta') },
          localSteps: 1,
          computeSeconds: 0.0123456789,
          waitSeconds: 0.0031415926,
          transferSeconds: 0.0027182818,
        },
      ],
    },
    { local: { delta: update.dim } },
  );
  return encoded.byteLength + frameHeaderBytes(encoded.byteLength, true);
}

/** k f64 values plus log2 C(d, k) bits, in bytes. */
export function sparseInformationBoundBytes(d: number, k: number): number {
  return k * F64_BYTES + informationBoundBits(d, k) / 8;
}

export function runWireBench(sizes: WireEnvelopeSizes = FULL_WIRE_SIZES): BenchResult[] {
  const rng = Rng.derive(1, 'bench', 'wire');
  const { sparse, dense } = sizes;

  const sparseSource = Float64Array.from({ length: sparse.d }, () => rng.normal());
  const sparseUpdate = compress(sparseSource, {
    kind: 'top-k',
    count: sparse.k,
    errorFeedback: true,
    unbiased: false,
    values: 'f64',
  });
  const sparseWire = upWireBytes(sparseUpdate);
  const bound = sparseInformationBoundBytes(sparse.d, sparse.k);
  const sparseRatio = sparseWire / bound;

  const denseUpdate: CompressedVector = {
    dim: dense.d,
    indices: null,
    values: Float64Array.from({ length: dense.d }, () => rng.normal()),
  };
  const denseWire = upWireBytes(denseUpdate);
  const densePayload = payloadBytes(denseUpdate);
  const denseRatio = denseWire / densePayload;

  return [
    {
      suite: 'wire',
      case: 'sparse up message',
      shape: { d: sparse.d, k: sparse.k, values: 'f64', compressor: 'top-k' },
      figure: sparseWire,
      unit: 'B',
      better: 'lower',
      reference: {
        against: 'information bound: k values + log2 C(d, k) bits',
        figure: bound,
        ratio: sparseRatio,
      },
      target: benchTarget('ratio', WIRE_TARGETS.sparseOverBound, 'x', sparseRatio, 'lower'),
    },
    {
      suite: 'wire',
      case: 'dense up message',
      shape: { d: dense.d, values: 'f64' },
      figure: denseWire,
      unit: 'B',
      better: 'lower',
      reference: { against: 'payload: d values', figure: densePayload, ratio: denseRatio },
      target: benchTarget('ratio', WIRE_TARGETS.denseOverPayload, 'x', denseRatio, 'lower'),
    },
  ];
}
