import { describe, expect, it } from 'vitest';
import { Rng } from '../../src/base/rng.js';
import { CompressError } from '../../src/compress/compress-error.js';
import { decompress } from '../../src/compress/compressed-vector.js';
import { compress } from '../../src/compress/compressor.js';
import { ErrorFeedbackEncoder } from '../../src/compress/error-feedback.js';
import { compressorSchema } from '../../src/scenario/schema.js';

const UNIT = 2 ** -30;

/**
 * Entries are integers in [-2^30, 2^30] times 2^-30: 31 significant bits, more than the 24 of
 * binary32, so the f32 cases do round. Every quantity error feedback forms from them (v + e,
 * the kept entries, their f32 roundings, v + e - c, the sums over 200 rounds) is a multiple of
 * 2^-30; isDyadic below checks that they also stay under 2^20 in magnitude, i.e. under 2^50
 * units, so binary64 holds each one and each sum exactly (IEEE 754: an integer times a power
 * of two is exact while it fits the 53-bit significand). An f32 rounding of such a u is again
 * a multiple of 2^-30, and u - fround(u) is exact by Sterbenz's lemma.
 */
function dyadicVector(rng: Rng, d: number): Float64Array {
  const v = new Float64Array(d);
  for (let j = 0; j < d; j++) v[j] = (rng.nextInt(2 ** 31 + 1) - 2 ** 30) * UNIT;
  return v;
}

function isDyadic(x: Float64Array): boolean {
  return x.every((value) => Number.isInteger(value / UNIT) && Math.abs(value) < 2 ** 20);
}

const cases = [
  { name: 'top-k f64', spec: { kind: 'top-k', count: 3 } },
  { name: 'top-k f32', spec: { kind: 'top-k', fraction: 0.125, values: 'f32' } },
  { name: 'rand-k f64', spec: { kind: 'rand-k', count: 5 } },
  { name: 'none f32', spec: { kind: 'none', values: 'f32' } },
] as const;

describe('ErrorFeedbackEncoder', () => {
  for (const { name, spec } of cases) {
    it(`${name}: sum of received vectors + final memory == sum of inputs, exactly`, () => {
      // The telescoping identity of error feedback (Stich, Cordonnier and Jaggi, NeurIPS 2018;
      // Karimireddy et al., ICML 2019): e_T = sum_t v_t - sum_t c_t with c_t as received.
      // With dyadic inputs (see dyadicVector) both sides are computed without rounding, so the
      // comparison is bit for bit and a lost or double-counted entry fails it.
      const d = 32;
      const parsed = compressorSchema.parse(spec);
      const encoder = new ErrorFeedbackEncoder(d, parsed);
      const rng = Rng.derive(11, 'ef inputs', name);
      const sumInputs = new Float64Array(d);
      const sumReceived = new Float64Array(d);
      for (let round = 0; round < 200; round++) {
        const v = dyadicVector(rng, d);
        const received = decompress(encoder.encode(v, Rng.derive(11, 'ef rand-k', round)));
        for (let j = 0; j < d; j++) {
          sumInputs[j] += v[j];
          sumReceived[j] += received[j];
        }
      }
      const memory = encoder.memory();
      // The premise of exactness, checked rather than assumed.
      expect(isDyadic(memory) && isDyadic(sumInputs) && isDyadic(sumReceived)).toBe(true);
      const reassembled = new Float64Array(d);
      for (let j = 0; j < d; j++) reassembled[j] = sumReceived[j] + memory[j];
      expect(reassembled).toEqual(sumInputs);
      // A lossy channel must actually have held something back at some point.
      expect(memory.some((e) => e !== 0)).toBe(true);
    });
  }

  it('with error feedback off sends C(v) and keeps a zero memory', () => {
    const spec = compressorSchema.parse({ kind: 'top-k', count: 2, errorFeedback: false });
    const encoder = new ErrorFeedbackEncoder(6, spec);
    const rng = Rng.derive(3, 'ef off');
    for (let round = 0; round < 5; round++) {
      const v = Float64Array.from({ length: 6 }, () => rng.normal());
      expect(decompress(encoder.encode(v))).toEqual(decompress(compress(v, spec)));
      expect(encoder.memory()).toEqual(new Float64Array(6));
    }
  });

  it('checks the dimension and leaves the memory untouched when compression fails', () => {
    const encoder = new ErrorFeedbackEncoder(
      3,
      compressorSchema.parse({ kind: 'top-k', count: 1 }),
    );
    encoder.encode(Float64Array.from([1, 2, 3]));
    const before = encoder.memory();
    expect(() => encoder.encode(Float64Array.from([1, NaN, 3]))).toThrow(CompressError);
    expect(encoder.memory()).toEqual(before);
    let code: string | undefined;
    try {
      encoder.encode(new Float64Array(4));
    } catch (error) {
      code = (error as CompressError).code;
    }
    expect(code).toBe('E_COMPRESS_DIMENSION');
  });
});
