// The live measured rate's curve (server/live-curve.ts): exact up to POINTS_MAX points, bounded
// beyond, always with the first and the latest point, and cut at the first non-finite value as
// the summary's curve is.
import { describe, expect, it } from 'vitest';
import { LiveCurve, POINTS_MAX } from '../../server/live-curve.js';

describe('LiveCurve', () => {
  it('keeps every point up to POINTS_MAX', () => {
    const curve = new LiveCurve();
    for (let r = 0; r < 100; r++) curve.add(r, 0.9 ** r);
    expect(curve.points()).toEqual(
      Array.from({ length: 100 }, (_, r) => ({ round: r, suboptimality: 0.9 ** r })),
    );
    expect(curve.count()).toBe(100);
  });

  it('stays within POINTS_MAX + 1 points over a long run, evenly strided, first and latest kept', () => {
    const curve = new LiveCurve();
    const total = 20 * POINTS_MAX + 3;
    for (let r = 0; r < total; r++) curve.add(r, 1 / (r + 1));
    const points = curve.points();
    expect(points.length).toBeLessThanOrEqual(POINTS_MAX + 1);
    expect(points.length).toBeGreaterThan(POINTS_MAX / 4);
    expect(points[0].round).toBe(0);
    expect(points[points.length - 1].round).toBe(total - 1);
    const gaps = new Set(points.slice(1, -1).map((p, i) => p.round - points[i].round));
    expect(gaps.size).toBe(1);
    expect(curve.count()).toBe(total);
  });

  it('ends at the first non-finite value', () => {
    const curve = new LiveCurve();
    curve.add(0, 1);
    curve.add(1, Number.POSITIVE_INFINITY);
    curve.add(2, 0.5);
    expect(curve.points()).toEqual([{ round: 0, suboptimality: 1 }]);
  });
});
