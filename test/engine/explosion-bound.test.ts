// The explosion bound (src/engine/explosion-bound.ts): EXPLOSION_FACTOR (1e12, common practice)
// times the run's initial scale, max(1, ||x_0||, ||x_0 - x*||) for norms and max(1, f(x_0) - f*)
// for f - f*. Norms are taken without overflow, and NaN or an infinity is never within.

import { describe, expect, it } from 'vitest';
import {
  EXPLOSION_FACTOR,
  explosionBound,
  normWithin,
  suboptimalityWithin,
} from '../../src/engine/explosion-bound.js';

describe('explosionBound', () => {
  it('scales with the larger of ||x_0||, ||x_0 - x*|| and 1, and f(x_0) - f* or 1', () => {
    // ||(3, 4)|| = 5 (a 3-4-5 triangle)
    const fromModel = explosionBound(Float64Array.of(3, 4), { suboptimality: 20, distance: 2 });
    expect(fromModel).toEqual({
      normMax: 5 * EXPLOSION_FACTOR,
      suboptimalityMax: 20 * EXPLOSION_FACTOR,
    });
    const fromDistance = explosionBound(new Float64Array(2), { suboptimality: 0.5, distance: 7 });
    expect(fromDistance).toEqual({
      normMax: 7 * EXPLOSION_FACTOR,
      suboptimalityMax: EXPLOSION_FACTOR,
    });
    // x_0 = x*: the bound stays EXPLOSION_FACTOR, not 0
    const atOptimum = explosionBound(new Float64Array(2), { suboptimality: 0, distance: 0 });
    expect(atOptimum).toEqual({ normMax: EXPLOSION_FACTOR, suboptimalityMax: EXPLOSION_FACTOR });
  });

  it('holds a vector within by its Euclidean norm, without overflow, and never NaN or infinity', () => {
    const bound = explosionBound(Float64Array.of(1), { suboptimality: 1, distance: 1 });
    // ||(0.6, 0.8) * 1e12|| = 1e12 exactly at the bound (a 3-4-5 triangle)
    expect(normWithin(Float64Array.of(0.6e12, 0.8e12), bound)).toBe(true);
    expect(normWithin(Float64Array.of(0.6e12, 0.9e12), bound)).toBe(false);
    expect(normWithin(Float64Array.of(1e300), bound)).toBe(false);
    expect(normWithin(Float64Array.of(0, Number.NaN, 1), bound)).toBe(false);
    expect(normWithin(Float64Array.of(Number.NaN, 1e300), bound)).toBe(false);
    expect(normWithin(Float32Array.of(1, Number.NEGATIVE_INFINITY), bound)).toBe(false);
    expect(normWithin(new Float64Array(3), bound)).toBe(true);
    // a bound past float64's square root: the norm of 1e200 * (3, 4) is 5e200, not infinity
    const wide = explosionBound(Float64Array.of(1e190), { suboptimality: 1, distance: 1 });
    expect(normWithin(Float64Array.of(3e200, 4e200), wide)).toBe(true);
    expect(normWithin(Float64Array.of(3e202, 4e202), wide)).toBe(false);
  });

  it('holds f - f* within its own bound', () => {
    const bound = explosionBound(Float64Array.of(1), { suboptimality: 2, distance: 1 });
    expect(suboptimalityWithin(2e12, bound)).toBe(true);
    expect(suboptimalityWithin(2.0000001e12, bound)).toBe(false);
    expect(suboptimalityWithin(Number.POSITIVE_INFINITY, bound)).toBe(false);
    expect(suboptimalityWithin(Number.NaN, bound)).toBe(false);
  });
});
