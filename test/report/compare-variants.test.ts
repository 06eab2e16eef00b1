// Variants are the product of the ladders (first ladder slowest); a zipped ladder is one factor,
// so its fields move together. The counts are products of rung counts, worked by hand.
import { describe, expect, it } from 'vitest';
import { COMPARE_LIMITS, expandVariants, variantCount } from '../../src/report/compare-variants.js';
import { parseLadderOption } from '../../src/report/ladder-option.js';
import type { Ladder } from '../../src/report/ladder.js';

const ladder = (text: string): Ladder => parseLadderOption(text);

describe('expandVariants', () => {
  it('runs the product, first ladder slowest, with short unambiguous labels', () => {
    const variants = expandVariants([
      ladder('method.name:fedavg/fedlin'),
      ladder('compression.uplink.default.fraction:1/0.1/0.01'),
    ]);
    expect(variants.length).toBe(2 * 3);
    expect(variants.map((v) => v.label)).toEqual([
      'name:fedavg fraction:1',
      'name:fedavg fraction:0.1',
      'name:fedavg fraction:0.01',
      'name:fedlin fraction:1',
      'name:fedlin fraction:0.1',
      'name:fedlin fraction:0.01',
    ]);
    expect(variants[4].rungs).toEqual([1, 1]);
    expect(variants[4].tweaks).toEqual([
      { path: ['method', 'name'], value: 'fedlin' },
      { path: ['compression', 'uplink', 'default', 'fraction'], value: 0.1 },
    ]);
    expect(new Set(variants.map((v) => v.folderName)).size).toBe(6);
    expect(variants[0].folderName).toBe('01-fedavg-1');
  });

  it('moves the fields of a zipped ladder together: one variant a rung, not their product', () => {
    const variants = expandVariants([
      ladder('method.name+method.stepSize:fedavg,0.05/fedlin,0.2'),
      ladder('seed:1/2'),
    ]);
    expect(
      variantCount([
        ladder('method.name+method.stepSize:fedavg,0.05/fedlin,0.2'),
        ladder('seed:1/2'),
      ]),
    ).toBe(2 * 2);
    expect(variants.map((v) => v.label)).toEqual([
      'name:fedavg stepSize:0.05 seed:1',
      'name:fedavg stepSize:0.05 seed:2',
      'name:fedlin stepSize:0.2 seed:1',
      'name:fedlin stepSize:0.2 seed:2',
    ]);
    expect(variants[2].tweaks).toEqual([
      { path: ['method', 'name'], value: 'fedlin' },
      { path: ['method', 'stepSize'], value: 0.2 },
      { path: ['seed'], value: 1 },
    ]);
  });

  it('uses whole paths where last keys collide, and keeps labels apart where values print alike', () => {
    const [v] = expandVariants([
      ladder('compression.uplink.default.fraction:0.1'),
      ladder('compression.downlink.default.fraction:0.5'),
    ]);
    expect(v.label).toBe(
      'compression.uplink.default.fraction:0.1 compression.downlink.default.fraction:0.5',
    );
    // the string "1" and the number 1 are different values and are shown differently
    const labels = expandVariants([ladder('description:"1"/1')]).map((x) => x.label);
    expect(labels).toEqual(['description:"1"', 'description:1']);
  });

  it('keeps folder names within the limit and unique by their number', () => {
    const long = 'x'.repeat(200);
    const variants = expandVariants([ladder(`description:${long}a/${long}b`)]);
    expect(variants.every((v) => v.folderName.length <= COMPARE_LIMITS.folderNameMax)).toBe(true);
    expect(variants.map((v) => v.folderName.slice(0, 3))).toEqual(['01-', '02-']);
  });

  it('refuses more variants than the limit, and nothing to compare', () => {
    const rungs = Array.from({ length: 9 }, (_, i) => String(i + 1)).join('/');
    expect(9 * 9).toBeGreaterThan(COMPARE_LIMITS.variantsMax);
    expect(() =>
      expandVariants([ladder(`method.localSteps:${rungs}`), ladder(`seed:${rungs}`)]),
    ).toThrow(/81 variants \(9 x 9 rungs\) exceed the limit of 64/);
    expect(() => expandVariants([])).toThrow(/nothing to compare/);
  });
});
