import { describe, expect, it } from 'vitest';
import { Rng } from '../../src/base/rng.js';
import { decompress } from '../../src/compress/compressed-vector.js';
import { compress } from '../../src/compress/compressor.js';
import { denseBytes, payloadBytes, sparseBytes } from '../../src/compress/payload-bytes.js';
import { toWireForm } from '../../src/compress/wire-form.js';
import { compressorSchema } from '../../src/scenario/schema.js';
import { topKIndices } from '../../src/vec/topk.js';

describe('toWireForm', () => {
  it('is sparse exactly when sparse carries fewer bytes, and then never costs more than dense', () => {
    // The rule documented in wire-form.ts, checked for every k of a vector at both widths.
    const d = 64;
    const rng = Rng.derive(4, 'wire form');
    const v = Float64Array.from({ length: d }, () => rng.normal());
    for (const values of ['f64', 'f32'] as const) {
      const bytesPerValue = values === 'f64' ? 8 : 4;
      for (let k = 1; k <= d; k++) {
        const cv = compress(v, compressorSchema.parse({ kind: 'top-k', count: k, values }));
        const indices = topKIndices(v, k);
        const sparse = sparseBytes(indices, bytesPerValue);
        const dense = denseBytes(d, bytesPerValue);
        expect(cv.indices === null).toBe(sparse >= dense);
        expect(payloadBytes(cv)).toBe(Math.min(sparse, dense));
        // Either form stands for the same vector.
        const expected = new Float64Array(d);
        for (const j of indices) expected[j] = values === 'f64' ? v[j] : Math.fround(v[j]);
        expect(decompress(cv)).toEqual(expected);
      }
    }
  });

  it('goes dense once k nears d: every index costs at least one byte', () => {
    // All d indices: d values plus d one-byte gaps, more than d values alone.
    const all = Uint32Array.from({ length: 10 }, (_, j) => j);
    const cv = toWireForm(10, all, new Float32Array(10).fill(1));
    expect(cv.indices).toBeNull();
    expect(cv.values).toBeInstanceOf(Float32Array);
    const few = toWireForm(10, Uint32Array.of(2, 7), Float64Array.of(1, 2));
    expect(few.indices).toEqual(Uint32Array.of(2, 7));
  });
});
