import { describe, expect, it } from 'vitest';
import { Rng } from '../../src/base/rng.js';
import { encodeIndicesDeltaVarint } from '../../src/compress/index-coding.js';
import {
  informationBoundBits,
  payloadBytes,
  valueBytes,
} from '../../src/compress/payload-bytes.js';

/** C(d, k) exactly, by the multiplicative formula in BigInt. */
function binomial(d: number, k: number): bigint {
  let c = 1n;
  for (let i = 1; i <= k; i++) c = (c * BigInt(d - k + i)) / BigInt(i);
  return c;
}

describe('informationBoundBits', () => {
  it('is log2 C(d, k), checked against exact binomials', () => {
    // C(10, 3) = 120 (common knowledge; Pascal's triangle).
    expect(informationBoundBits(10, 3)).toBeCloseTo(Math.log2(120), 12);
    for (let d = 0; d <= 60; d++) {
      for (let k = 0; k <= d; k++) {
        const exact = Math.log2(Number(binomial(d, k)));
        expect(Math.abs(informationBoundBits(d, k) - exact)).toBeLessThanOrEqual(
          1e-12 * Math.max(1, exact),
        );
      }
    }
  });

  it('stays finite and symmetric far beyond where C(d, k) overflows a double', () => {
    // C(d, k) = C(d, d - k); and log2 C(d, k) <= k log2(e d / k) (the standard upper bound
    // (d choose k) <= (e d / k)^k).
    const d = 10_000_000;
    const k = 100_000;
    const bits = informationBoundBits(d, k);
    expect(Number.isFinite(bits)).toBe(true);
    expect(bits).toBeCloseTo(informationBoundBits(d, d - k), 3);
    expect(bits).toBeLessThanOrEqual(k * Math.log2((Math.E * d) / k));
    expect(bits).toBeGreaterThan(k * Math.log2(d / k));
  });
});

describe('payloadBytes', () => {
  it('counts values, plus delta varint index bytes for the sparse form', () => {
    expect(valueBytes('f64')).toBe(8);
    expect(valueBytes('f32')).toBe(4);
    expect(payloadBytes({ dim: 10, indices: null, values: new Float64Array(10) })).toBe(80);
    expect(payloadBytes({ dim: 10, indices: null, values: new Float32Array(10) })).toBe(40);
    const indices = Uint32Array.of(3, 200, 70_000);
    const expected = 3 * 4 + encodeIndicesDeltaVarint(indices).length;
    expect(payloadBytes({ dim: 100_000, indices, values: new Float32Array(3) })).toBe(expected);
  });

  it('spends index bytes within a small factor of the information bound on random sets', () => {
    // Floor: log2 C(d, k) / 8 bytes for any coding of a uniformly random k-subset (counting:
    // fewer bits cannot name every subset). The delta varint code spends ceil(b / 7) bytes on
    // a gap of b significant bits, against about log2(d / k) + log2(e) bits of information per
    // index; our acceptance bound, a factor 2 for densities up to 1/16, is an engineering
    // threshold. Measured ratios are printed for the report.
    const rows: string[] = [];
    for (const [d, k] of [
      [1_000, 10],
      [1_000, 62],
      [100_000, 100],
      [100_000, 6_250],
      [1_000_000, 1_000],
      [10_000_000, 100],
    ]) {
      const rng = Rng.derive(8, 'index bytes', d, k);
      const bytes = encodeIndicesDeltaVarint(rng.sampleWithoutReplacement(d, k)).length;
      const boundBytes = informationBoundBits(d, k) / 8;
      const ratio = bytes / boundBytes;
      rows.push(
        `d=${d} k=${k}: ${bytes} index bytes, bound ${boundBytes.toFixed(1)} bytes, ratio ${ratio.toFixed(3)}`,
      );
      expect(ratio).toBeGreaterThanOrEqual(1);
      expect(ratio).toBeLessThan(2);
    }
    console.info(rows.join('\n'));
  });
});
