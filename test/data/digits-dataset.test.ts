import { describe, expect, it } from 'vitest';
import { loadDataset, INTERCEPT_FEATURE } from '../../src/data/datasets.js';
import { partitionDirichlet, partitionShards } from '../../src/data/partition.js';
import { Rng } from '../../src/base/rng.js';
import { rawDigitValueCount } from './package-data-files.js';

// The package mnist 1.1.0 (README): 10,000 MNIST digits, 28 x 28 = 784 pixels each, normalized
// to [0, 1]. The issue expected 1,000 per class; the package's files hold 863 to 1,127 per digit
// (counted here from the files themselves), 10,000 in all.
const digits = loadDataset('digits', { standardize: false });
const pool = { labels: digits.targets };

describe('digits', () => {
  it('holds the 10,000 digits of the package, each digit as many times as its file holds images', () => {
    expect(digits.sampleCount).toBe(10_000);
    expect(digits.classNames).toEqual(['0', '1', '2', '3', '4', '5', '6', '7', '8', '9']);
    const counts = new Array<number>(10).fill(0);
    for (const label of digits.targets) counts[label]++;
    const fromFiles = Array.from({ length: 10 }, (_, d) => rawDigitValueCount(d) / 784);
    expect(counts).toEqual(fromFiles);
    expect(fromFiles.every(Number.isInteger)).toBe(true);
    expect(digits.droppedRowCount).toBe(0);
  });

  it('keeps the pixels in [0, 1] and appends the intercept: 785 features', () => {
    expect(digits.featureCount).toBe(785);
    expect(digits.featureNames[784]).toBe(INTERCEPT_FEATURE);
    let max = 0;
    let outside = 0;
    let interceptOff = 0;
    for (let s = 0; s < digits.sampleCount; s++) {
      for (let j = 0; j < 784; j++) {
        const v = digits.features[s * 785 + j];
        if (!(v >= 0 && v <= 1)) outside++;
        if (v > max) max = v;
      }
      if (digits.features[s * 785 + 784] !== 1) interceptOff++;
    }
    expect(outside).toBe(0);
    expect(interceptOff).toBe(0);
    expect(max).toBe(1);
  });

  it('splits 10,000 digits over 20 clients by Dirichlet(0.3) and by 2 shards each, fast and repeatably', () => {
    const started = performance.now();
    const a = partitionDirichlet(pool, 20, 0.3, Rng.derive(5, 'partition'));
    const b = partitionDirichlet(pool, 20, 0.3, Rng.derive(5, 'partition'));
    const c = partitionShards(pool, 20, 2, Rng.derive(5, 'partition'));
    const d = partitionShards(pool, 20, 2, Rng.derive(5, 'partition'));
    // A bound for a loaded shared machine; each split takes milliseconds alone.
    expect(performance.now() - started).toBeLessThan(5000);
    expect(a.map((p) => Array.from(p))).toEqual(b.map((p) => Array.from(p)));
    expect(c.map((p) => Array.from(p))).toEqual(d.map((p) => Array.from(p)));
    for (const parts of [a, c]) {
      expect(parts.reduce((sum, p) => sum + p.length, 0)).toBe(10_000);
      expect(new Set(parts.flatMap((p) => Array.from(p))).size).toBe(10_000);
    }
    // Two shards of 250 digits cut from the label-sorted pool: at most 2 classes plus the
    // classes a shard boundary straddles (McMahan et al., AISTATS 2017, pathological split).
    for (const part of c)
      expect(new Set(Array.from(part, (i) => digits.targets[i])).size).toBeLessThanOrEqual(4);
  });
});
