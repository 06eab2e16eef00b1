import { describe, expect, it } from 'vitest';
import { Rng } from '../../src/base/rng.js';
import { UniformMinibatchSampler } from '../../src/problem/minibatch-sampler.js';
import { errorCode } from './fixtures.js';

// Upper critical value of the chi-square distribution with 9 degrees of freedom at significance
// 0.001, from the NIST/SEMATECH e-Handbook of Statistical Methods, section 1.3.6.7.4 (value
// recalled from memory of that table). Counts from sampling without replacement vary less than
// multinomial counts, so the test is conservative.
const CHI_SQUARE_999_DF9 = 27.877;

describe('UniformMinibatchSampler', () => {
  it('draws batches of distinct indices within the shard, in ascending order', () => {
    const sampler = new UniformMinibatchSampler(Rng.fromSeed(1), 50, 8);
    for (let draw = 0; draw < 200; draw++) {
      const batch = sampler.next();
      expect(batch.length).toBe(8);
      for (let t = 1; t < batch.length; t++) expect(batch[t]).toBeGreaterThan(batch[t - 1]);
      expect(batch[batch.length - 1]).toBeLessThan(50);
    }
  });

  it('repeats its batches from the same seed', () => {
    const a = new UniformMinibatchSampler(Rng.derive(7, 'minibatch', 3), 100, 10);
    const b = new UniformMinibatchSampler(Rng.derive(7, 'minibatch', 3), 100, 10);
    for (let draw = 0; draw < 20; draw++)
      expect(Array.from(a.next())).toEqual(Array.from(b.next()));
  });

  it('returns the whole shard when the batch is at least as large', () => {
    const sampler = new UniformMinibatchSampler(Rng.fromSeed(2), 5, 9);
    expect(sampler.batchSize).toBe(5);
    expect(Array.from(sampler.next())).toEqual([0, 1, 2, 3, 4]);
  });

  it('includes every index equally often (chi-square test, NIST critical value)', () => {
    const n = 10;
    const k = 3;
    const draws = 20_000;
    const sampler = new UniformMinibatchSampler(Rng.fromSeed(3), n, k);
    const counts = new Float64Array(n);
    for (let draw = 0; draw < draws; draw++) for (const s of sampler.next()) counts[s]++;
    const expected = (draws * k) / n;
    const statistic = counts.reduce((sum, c) => sum + (c - expected) ** 2 / expected, 0);
    expect(statistic).toBeLessThan(CHI_SQUARE_999_DF9);
  });

  it('rejects empty shards and batches', () => {
    expect(errorCode(() => new UniformMinibatchSampler(Rng.fromSeed(4), 0, 1))).toBe(
      'E_PROBLEM_BATCH',
    );
    expect(errorCode(() => new UniformMinibatchSampler(Rng.fromSeed(4), 10, 0))).toBe(
      'E_PROBLEM_BATCH',
    );
  });
});
