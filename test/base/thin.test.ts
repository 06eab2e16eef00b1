// Thinning keeps the first and last points and an even spread between (common practice for
// plotting long series); the bounds are the module's own contract.
import { describe, expect, it } from 'vitest';
import { thin, thinIndices } from '../../src/base/thin.js';

describe('thinIndices', () => {
  it('keeps everything when the series fits', () => {
    expect(thinIndices(5, 10)).toEqual([0, 1, 2, 3, 4]);
    expect(thinIndices(0, 10)).toEqual([]);
  });

  it('keeps at most pointsMax indices, strictly increasing, first and last included', () => {
    for (const [length, max] of [
      [10_001, 2000],
      [2001, 2000],
      [37, 5],
      [1_000_000, 2],
    ]) {
      const indices = thinIndices(length, max);
      expect(indices.length).toBe(max);
      expect(indices[0]).toBe(0);
      expect(indices[indices.length - 1]).toBe(length - 1);
      for (let i = 1; i < indices.length; i++) expect(indices[i]).toBeGreaterThan(indices[i - 1]);
    }
  });

  it('spreads evenly: gaps differ by at most one', () => {
    const indices = thinIndices(1000, 7);
    const gaps = indices.slice(1).map((v, i) => v - indices[i]);
    expect(Math.max(...gaps) - Math.min(...gaps)).toBeLessThanOrEqual(1);
  });

  it('rejects a bound below two', () => {
    expect(() => thinIndices(10, 1)).toThrow(RangeError);
  });

  it('thin picks the items at those indices', () => {
    expect(thin(['a', 'b', 'c', 'd', 'e'], 3)).toEqual(['a', 'c', 'e']);
  });
});
