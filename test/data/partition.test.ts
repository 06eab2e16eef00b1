import { describe, expect, it } from 'vitest';
import { DataError } from '../../src/data/data-error.js';
import {
  nearEqualSizes,
  partitionDirichlet,
  partitionIid,
  naturalGroupSizes,
  naturalKeyOrder,
  partitionNatural,
  partitionPool,
  partitionShards,
  type LabelledPool,
  type PartitionSpec,
} from '../../src/data/partition.js';
import { Rng } from '../../src/base/rng.js';

/** A pool of `perClass` samples of each of `classes` labels, interleaved (label = index mod classes). */
function balancedPool(classes: number, perClass: number): LabelledPool {
  return { labels: Int32Array.from({ length: classes * perClass }, (_, i) => i % classes) };
}

/** Every index of [0, poolSize) in exactly one part, every part ascending and non-empty. */
function expectExactCover(parts: Uint32Array[], poolSize: number): void {
  const seen = new Uint8Array(poolSize);
  for (const part of parts) {
    expect(part.length).toBeGreaterThan(0);
    for (let i = 0; i < part.length; i++) {
      if (i > 0) expect(part[i]).toBeGreaterThan(part[i - 1]);
      seen[part[i]]++;
    }
  }
  expect(seen.every((count) => count === 1)).toBe(true);
}

function classesOf(parts: Uint32Array[], labels: ArrayLike<number>): Set<number>[] {
  return parts.map((part) => new Set(Array.from(part, (i) => labels[i])));
}

const specs: PartitionSpec[] = [
  { kind: 'iid' },
  { kind: 'dirichlet', alpha: 0.3 },
  { kind: 'dirichlet', alpha: 100 },
  { kind: 'shards', classesPerClient: 2 },
];

describe('every partitioner', () => {
  const pool: LabelledPool = {
    ...balancedPool(5, 120),
    keys: Int32Array.from({ length: 600 }, (_, i) => Math.floor(i / 13)),
  };

  for (const spec of specs) {
    it(`${JSON.stringify(spec)}: covers the pool exactly and repeats from the seed`, () => {
      const parts = partitionPool(pool, spec, 8, Rng.derive(1, 'partition'));
      expect(parts.length).toBe(8);
      expectExactCover(parts, 600);
      const again = partitionPool(pool, spec, 8, Rng.derive(1, 'partition'));
      expect(again.map((p) => Array.from(p))).toEqual(parts.map((p) => Array.from(p)));
      const other = partitionPool(pool, spec, 8, Rng.derive(2, 'partition'));
      expect(other.map((p) => Array.from(p))).not.toEqual(parts.map((p) => Array.from(p)));
    });
  }
});

describe('iid', () => {
  it('splits into near-equal blocks by default', () => {
    expect(nearEqualSizes(10, 3)).toEqual([4, 3, 3]);
    expect(partitionIid(10, 3, Rng.fromSeed(3)).map((p) => p.length)).toEqual([4, 3, 3]);
  });

  it('honours given sizes (quantity skew)', () => {
    const parts = partitionIid(60, 3, Rng.fromSeed(3), [5, 15, 40]);
    expect(parts.map((p) => p.length)).toEqual([5, 15, 40]);
    expectExactCover(parts, 60);
  });

  it('refuses sizes that do not add up to the pool, and pools smaller than the client count', () => {
    expect(() => partitionIid(60, 3, Rng.fromSeed(3), [5, 15, 30])).toThrow(DataError);
    expect(() => partitionIid(2, 3, Rng.fromSeed(3))).toThrow(DataError);
  });
});

describe('dirichlet', () => {
  /** Mean over clients of the largest class share within the client: 1/classes when balanced. */
  function meanLargestShare(
    parts: Uint32Array[],
    labels: ArrayLike<number>,
    classes: number,
  ): number {
    let total = 0;
    for (const part of parts) {
      const counts = new Float64Array(classes);
      for (const i of part) counts[labels[i]]++;
      total += Math.max(...counts) / part.length;
    }
    return total / parts.length;
  }

  it('skews labels more as alpha falls', () => {
    // Dir(alpha) shares concentrate on one client as alpha -> 0 and tend to 1/m as alpha -> inf
    // (the Dirichlet's variance alpha_j(alpha_0 - alpha_j)/(alpha_0^2(alpha_0 + 1)) shrinks
    // with alpha_0; Kotz, Balakrishnan and Johnson, Continuous Multivariate Distributions, 2000).
    const classes = 10;
    const pool = balancedPool(classes, 200);
    const skewed = meanLargestShare(
      partitionDirichlet(pool, 10, 0.1, Rng.fromSeed(5)),
      pool.labels,
      classes,
    );
    const mild = meanLargestShare(
      partitionDirichlet(pool, 10, 1, Rng.fromSeed(5)),
      pool.labels,
      classes,
    );
    const flat = meanLargestShare(
      partitionDirichlet(pool, 10, 1000, Rng.fromSeed(5)),
      pool.labels,
      classes,
    );
    expect(skewed).toBeGreaterThan(mild);
    expect(mild).toBeGreaterThan(flat);
    expect(skewed).toBeGreaterThan(0.5);
    // With alpha = 1000 each class share is 1/m within a few percent, so a client's largest
    // class share stays near 1/classes = 0.1.
    expect(flat).toBeLessThan(0.2);
  });

  it('gives each client the expected share 1/m of each class', () => {
    // E[share_ij] = alpha / (m alpha) = 1/m and Var = (1/m)(1 - 1/m)/(m alpha + 1) (Dirichlet
    // moments; Kotz, Balakrishnan and Johnson, 2000). A client's share of all samples is the
    // mean over 2 000 independent classes, so its SE is sqrt(Var/2000); rounding the cuts to
    // whole samples (at most 1/100 of a class, in no fixed direction) is far below it. 5 SE.
    const m = 4;
    const alpha = 0.5;
    const pool = balancedPool(2_000, 100);
    const parts = partitionDirichlet(pool, m, alpha, Rng.fromSeed(6));
    const variance = ((1 / m) * (1 - 1 / m)) / (m * alpha + 1);
    for (const part of parts)
      expect(Math.abs(part.length / pool.labels.length - 1 / m)).toBeLessThan(
        5 * Math.sqrt(variance / 2_000),
      );
  });

  it('redraws splits that leave a client empty, and gives up with a named error when it must', () => {
    const tiny = balancedPool(2, 3);
    const parts = partitionDirichlet(tiny, 6, 50, Rng.fromSeed(7));
    expectExactCover(parts, 6);
    let caught: unknown = null;
    try {
      partitionDirichlet(balancedPool(1, 6), 6, 0.01, Rng.fromSeed(7));
    } catch (error) {
      caught = error;
    }
    expect(caught).toMatchObject({ code: 'E_DATA_SPEC', fieldPath: 'data.partition.alpha' });
  });
});

describe('shards', () => {
  it('gives each client at most classesPerClient classes when shards align with classes', () => {
    // 10 classes x 60 samples cut into 20 x 2 = 40 shards of 15: every shard lies inside one class.
    const pool = balancedPool(10, 60);
    const parts = partitionShards(pool, 20, 2, Rng.fromSeed(8));
    expectExactCover(parts, 600);
    for (const classes of classesOf(parts, pool.labels))
      expect(classes.size).toBeLessThanOrEqual(2);
    expect(parts.every((p) => p.length === 30)).toBe(true);
  });

  it('refuses more shards than samples, naming data.partition.classesPerClient', () => {
    expect(() => partitionShards(balancedPool(2, 5), 6, 2, Rng.fromSeed(8))).toThrow(
      expect.objectContaining({ fieldPath: 'data.partition.classesPerClient' }),
    );
  });
});

describe('natural', () => {
  it('gives each key value its own client, in sorted order, whole', () => {
    const keys = ['b', 'c', 'a', 'b', 'a', 'c', 'c'];
    const pool: LabelledPool = { labels: new Int32Array(keys.length), keys };
    const parts = partitionNatural(pool, 3, 'writer');
    expectExactCover(parts, keys.length);
    expect(parts.map((p) => Array.from(p))).toEqual([
      [2, 4],
      [0, 3],
      [1, 5, 6],
    ]);
    expect(naturalKeyOrder(keys)).toEqual(['a', 'b', 'c']);
    expect(naturalGroupSizes(keys)).toEqual([2, 2, 3]);
  });

  it('does not depend on the order of the samples, and orders numbers before strings', () => {
    expect(naturalKeyOrder([10, 'b', 2, 'a', 10])).toEqual([2, 10, 'a', 'b']);
    const keys = [3, 1, 2, 3, 1];
    const reordered = [1, 3, 2, 1, 3];
    const groups = (k: number[]) =>
      partitionNatural({ labels: new Int32Array(k.length), keys: k }, 3, 'k').map((p) => [
        ...new Set(Array.from(p, (i) => k[i])),
      ]);
    expect(groups(reordered)).toEqual(groups(keys));
    expect(groups(keys)).toEqual([[1], [2], [3]]);
  });

  it('refuses a client count other than the number of key values, naming clients.count', () => {
    const pool: LabelledPool = { labels: new Int32Array(4), keys: ['x', 'x', 'y', 'y'] };
    for (const count of [1, 3]) {
      expect(() => partitionNatural(pool, count, 'writer')).toThrow(
        expect.objectContaining({ code: 'E_DATA_SPEC', fieldPath: 'clients.count' }),
      );
    }
  });

  it('refuses data without keys, naming data.partition.key', () => {
    expect(() => partitionNatural({ labels: new Int32Array(4) }, 2, 'writer')).toThrow(
      expect.objectContaining({ fieldPath: 'data.partition.key' }),
    );
  });
});
