import { describe, expect, it } from 'vitest';
import { Rng } from '../../src/base/rng.js';
import { CompressError } from '../../src/compress/compress-error.js';
import { decompress } from '../../src/compress/compressed-vector.js';
import { compress, isExact, keptCount } from '../../src/compress/compressor.js';
import type { CompressorSpec } from '../../src/scenario/schema.js';
import { compressorSchema } from '../../src/scenario/schema.js';
import { distanceSquared, normSquared } from '../../src/vec/kernels.js';
import { codeOf } from '../support/error-code.js';

const compressErrorCode = (action: () => unknown): string => codeOf(action, CompressError);

const spec = (input: Record<string, unknown>): CompressorSpec => compressorSchema.parse(input);

/** Gaussian, heavy-tailed (cubed Gaussian), few-valued (many ties) and partly zero vectors. */
function testVector(rng: Rng, d: number, flavour: number): Float64Array {
  const v = new Float64Array(d);
  for (let j = 0; j < d; j++) {
    const z = rng.normal();
    if (flavour === 0) v[j] = z;
    else if (flavour === 1) v[j] = z * z * z;
    else if (flavour === 2) v[j] = rng.nextInt(7) - 3;
    else v[j] = rng.nextFloat() < 0.5 ? 0 : z;
  }
  return v;
}

describe('keptCount', () => {
  // The rule is the scenario schema's own: k = count, or ceil(fraction d), clamped to [1, d].
  it('takes the count, or the ceiling of fraction * d, clamped to [1, d]', () => {
    expect(keptCount(10, spec({ kind: 'top-k', count: 3 }))).toBe(3);
    expect(keptCount(10, spec({ kind: 'top-k', fraction: 0.25 }))).toBe(3);
    expect(keptCount(10, spec({ kind: 'top-k', count: 50 }))).toBe(10);
    expect(keptCount(10, spec({ kind: 'rand-k', fraction: 0.001 }))).toBe(1);
    expect(keptCount(10, spec({ kind: 'none' }))).toBe(10);
  });

  it('does not let binary rounding of a decimal fraction add an entry', () => {
    // IEEE 754 binary64: 0.07 * 100 rounds to 7.000000000000001 (checked first, so the test
    // keeps its point); the user meant k = 7.
    expect(0.07 * 100).toBeGreaterThan(7);
    expect(keptCount(100, spec({ kind: 'top-k', fraction: 0.07 }))).toBe(7);
  });

  it('rejects a top-k without fraction or count (a spec built by hand, past the schema)', () => {
    const bare = {
      kind: 'top-k',
      errorFeedback: true,
      unbiased: false,
      values: 'f64',
    } as CompressorSpec;
    expect(compressErrorCode(() => keptCount(10, bare))).toBe('E_COMPRESS_SPEC');
  });
});

describe('top-k', () => {
  it('is a k-contraction: ||v - topk(v)||^2 <= (1 - k/d) ||v||^2', () => {
    // Stich, Cordonnier and Jaggi, "Sparsified SGD with Memory", NeurIPS 2018: the
    // k-contraction property (their Definition 2.1, numbering recalled from memory), which
    // top-k meets deterministically. The slack of 1e-12 relative covers the rounding of two
    // float sums; equality holds exactly when all magnitudes are equal.
    const rng = Rng.derive(2018, 'top-k contraction');
    let checked = 0;
    for (let trial = 0; trial < 400; trial++) {
      const d = 1 + rng.nextInt(200);
      const k = 1 + rng.nextInt(d);
      const v = testVector(rng, d, trial % 4);
      const kept = decompress(compress(v, spec({ kind: 'top-k', count: k })));
      const dropped = distanceSquared(v, kept);
      const total = normSquared(v);
      expect(dropped).toBeLessThanOrEqual((1 - k / d) * total + 1e-12 * total);
      checked++;
    }
    expect(checked).toBe(400);
  });

  it('keeps exactly the k largest magnitudes, ties to the lower index, as a full sort does', () => {
    // Reference: a full sort by (|v_j| descending, j ascending), the order DESIGN.md fixes.
    const rng = Rng.derive(7, 'top-k selection');
    for (let trial = 0; trial < 300; trial++) {
      const d = 2 + rng.nextInt(120);
      // k <= d/2 keeps the sparse form (see wire-form.ts), so the indices are visible.
      const k = 1 + rng.nextInt(Math.floor(d / 2));
      const v = testVector(rng, d, trial % 4);
      const order = Array.from({ length: d }, (_, j) => j).sort(
        (a, b) => Math.abs(v[b]) - Math.abs(v[a]) || a - b,
      );
      const expected = Uint32Array.from(order.slice(0, k)).sort();
      const cv = compress(v, spec({ kind: 'top-k', count: k }));
      expect(cv.indices).toEqual(expected);
      expect(Array.from(cv.values)).toEqual(Array.from(expected, (j) => v[j]));
    }
  });

  it('sends f32 values as received: each kept value rounded by Math.fround', () => {
    const v = Float64Array.from([0.1, -2.5, 1 / 3, 1e-9, 7]);
    const cv = compress(v, spec({ kind: 'top-k', count: 2, values: 'f32' }));
    expect(cv.values).toBeInstanceOf(Float32Array);
    expect(cv.indices).toEqual(Uint32Array.from([1, 4]));
    const all = compress(v, spec({ kind: 'none', values: 'f32' }));
    expect(Array.from(decompress(all))).toEqual(Array.from(v, Math.fround));
  });
});

describe('none', () => {
  it('at f64 is dense, exact and does not alias the input', () => {
    const v = Float64Array.from([1 / 3, -0, 5e-324, -1e308]);
    const s = spec({ kind: 'none' });
    expect(isExact(s)).toBe(true);
    const cv = compress(v, s);
    expect(cv.indices).toBeNull();
    expect(Array.from(decompress(cv))).toEqual(Array.from(v));
    v[0] = 42;
    expect(cv.values[0]).toBe(1 / 3);
  });
});

describe('rand-k', () => {
  it('keeps k distinct sorted entries of the seeded subset, scaled by d/k when unbiased', () => {
    const v = Float64Array.from({ length: 40 }, (_, j) => j + 1);
    const biased = compress(v, spec({ kind: 'rand-k', count: 5 }), Rng.derive(1, 'rand-k', 0));
    const unbiased = compress(
      v,
      spec({ kind: 'rand-k', count: 5, unbiased: true }),
      Rng.derive(1, 'rand-k', 0),
    );
    // The same stream draws the same subset: what makes runs repeat.
    expect(unbiased.indices).toEqual(biased.indices);
    const indices = biased.indices!;
    expect(indices.length).toBe(5);
    for (let i = 1; i < 5; i++) expect(indices[i]).toBeGreaterThan(indices[i - 1]);
    expect(Array.from(biased.values)).toEqual(Array.from(indices, (j) => v[j]));
    expect(Array.from(unbiased.values)).toEqual(Array.from(indices, (j) => v[j] * 8));
  });

  it('with d/k scaling is unbiased: the mean of many draws is v within a few standard errors', () => {
    // E[(d/k) 1{j in S} v_j] = v_j because a uniform k-subset holds j with probability k/d
    // (the unbiased rand-k of Stich, Cordonnier and Jaggi, NeurIPS 2018). Per entry, a draw is
    // (d/k) v_j or 0, so its variance is v_j^2 (d/k - 1) and the standard error of the mean of
    // N draws is |v_j| sqrt((d/k - 1) / N). Bound: 5 standard errors per entry.
    const d = 16;
    const k = 4;
    const draws = 20_000;
    const rng = Rng.derive(99, 'rand-k vector');
    const v = Float64Array.from({ length: d }, () => rng.normal());
    const s = spec({ kind: 'rand-k', count: k, unbiased: true });
    const sum = new Float64Array(d);
    const sumBiased = new Float64Array(d);
    const sBiased = spec({ kind: 'rand-k', count: k });
    for (let t = 0; t < draws; t++) {
      const c = decompress(compress(v, s, Rng.derive(99, 'rand-k draw', t)));
      const b = decompress(compress(v, sBiased, Rng.derive(99, 'rand-k draw', t)));
      for (let j = 0; j < d; j++) {
        sum[j] += c[j];
        sumBiased[j] += b[j];
      }
    }
    for (let j = 0; j < d; j++) {
      const standardError = Math.abs(v[j]) * Math.sqrt((d / k - 1) / draws);
      expect(Math.abs(sum[j] / draws - v[j])).toBeLessThanOrEqual(5 * standardError);
      // Without scaling the mean is (k/d) v: the bias the unbiased option removes.
      expect(Math.abs(sumBiased[j] / draws - (k / d) * v[j])).toBeLessThanOrEqual(
        (5 * k * standardError) / d,
      );
    }
  });

  it('needs a seeded Rng', () => {
    expect(
      compressErrorCode(() => compress(new Float64Array(4), spec({ kind: 'rand-k', count: 1 }))),
    ).toBe('E_COMPRESS_RNG_REQUIRED');
  });
});

describe('input checks', () => {
  it('rejects non-finite inputs, values beyond f32, and an empty vector', () => {
    const s = spec({ kind: 'top-k', count: 1 });
    expect(compressErrorCode(() => compress(Float64Array.from([1, NaN]), s))).toBe(
      'E_COMPRESS_NOT_FINITE',
    );
    expect(
      compressErrorCode(() => compress(Float64Array.from([Infinity]), spec({ kind: 'none' }))),
    ).toBe('E_COMPRESS_NOT_FINITE');
    // 1e39 is finite in binary64 but beyond the largest binary32, about 3.4e38 (IEEE 754).
    expect(
      compressErrorCode(() =>
        compress(Float64Array.from([1e39, 0]), spec({ kind: 'top-k', count: 1, values: 'f32' })),
      ),
    ).toBe('E_COMPRESS_NOT_FINITE');
    expect(compressErrorCode(() => compress(new Float64Array(0), s))).toBe('E_COMPRESS_DIMENSION');
  });
});
