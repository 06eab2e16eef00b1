// The test part (src/data/test-part.ts, build-shard.ts): a seeded fraction of each client's rows
// held out, the same rows every time, disjoint from the training rows and together with them
// every row the client had; and the scaling of a data set computed on the training rows only.
import { describe, expect, it } from 'vitest';
import { splitRows, testRowCount } from '../../src/data/test-part.js';
import { buildAllShards, buildAllTestShards, sampleCountsOf } from '../../src/data/build-shard.js';
import { scenarioFromDocument } from '../../src/scenario/load-scenario.js';
import type { Shard } from '../../src/problem/shard.js';

function rowsOf(shard: Shard): string[] {
  const p = shard.featureCount;
  return Array.from({ length: shard.sampleCount }, (_, s) =>
    [...shard.features.subarray(s * p, s * p + p), shard.targets[s]].join(','),
  );
}

describe('splitRows', () => {
  it('holds out floor(fraction * n) rows, never the last training row, the same ones for the same seed', () => {
    expect(testRowCount(0.2, 10)).toBe(2);
    expect(testRowCount(0.99, 10)).toBe(9);
    expect(testRowCount(0.5, 1)).toBe(0);
    const split = splitRows(7, 3, 50, 0.3);
    expect(split.test).toHaveLength(15);
    expect(split.training).toHaveLength(35);
    expect([...split.training, ...split.test].sort((a, b) => a - b)).toEqual(
      Array.from({ length: 50 }, (_, s) => s),
    );
    expect(splitRows(7, 3, 50, 0.3)).toEqual(split);
    expect(splitRows(7, 4, 50, 0.3).test).not.toEqual(split.test);
    expect(splitRows(7, 3, 50, 0).test).toHaveLength(0);
  });
});

describe('test parts of the shards', () => {
  const base = {
    name: 'iris-test-part',
    seed: 5,
    problem: { kind: 'softmax', classes: 3, regularization: 0.01 },
    data: { source: 'dataset', name: 'iris', partition: { kind: 'dirichlet', alpha: 0.5 } },
    clients: { count: 4 },
    method: { name: 'fedavg', stepSize: 0.1 },
    run: { rounds: 1 },
  };
  const whole = scenarioFromDocument({ ...base, data: { ...base.data, standardize: false } });
  const held = scenarioFromDocument({
    ...base,
    data: { ...base.data, standardize: false, testFraction: 0.25 },
  });

  it('split each client rows into disjoint training and test rows, the same in every call', () => {
    const all = buildAllShards(whole);
    const training = buildAllShards(held);
    const test = buildAllTestShards(held);
    expect(training.map((s) => s.sampleCount)).toEqual(sampleCountsOf(held));
    for (let id = 0; id < all.length; id++) {
      const n = all[id].sampleCount;
      expect(test[id].sampleCount).toBe(testRowCount(0.25, n));
      expect([...rowsOf(training[id]), ...rowsOf(test[id])].sort()).toEqual(rowsOf(all[id]).sort());
    }
    expect(buildAllTestShards(held).map(rowsOf)).toEqual(test.map(rowsOf));
    expect(buildAllTestShards(whole).every((s) => s.sampleCount === 0)).toBe(true);
  });

  it('standardize with the mean and deviation of the training rows alone', () => {
    const scaled = scenarioFromDocument({ ...base, data: { ...base.data, testFraction: 0.25 } });
    const training = buildAllShards(scaled);
    const test = buildAllTestShards(scaled);
    const p = training[0].featureCount;
    // iris: 4 measured columns, then the intercept (src/data/datasets.ts)
    for (let j = 0; j < p - 1; j++) {
      const column = (shards: Shard[]) =>
        shards.flatMap((s) =>
          Array.from({ length: s.sampleCount }, (_, r) => s.features[r * p + j]),
        );
      const values = column(training);
      const mean = values.reduce((a, b) => a + b, 0) / values.length;
      const variance = values.reduce((a, b) => a + (b - mean) ** 2, 0) / values.length;
      // zero mean and unit variance to rounding (common practice: a few ulps a row)
      expect(Math.abs(mean)).toBeLessThan(1e-12);
      expect(Math.abs(variance - 1)).toBeLessThan(1e-12);
      const heldOut = column(test);
      const heldOutMean = heldOut.reduce((a, b) => a + b, 0) / heldOut.length;
      // the test rows were not part of the statistics, so their mean is not forced to zero
      expect(Math.abs(heldOutMean)).toBeGreaterThan(1e-6);
    }
  });
});
