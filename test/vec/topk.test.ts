// Top-k selection against a full sort (the definition), ties to the lower index.
import { describe, expect, it } from 'vitest';
import { Rng } from '../../src/base/rng.js';
import { topKIndices } from '../../src/vec/topk.js';

function bySort(v: Float64Array, k: number): number[] {
  return Array.from(v.keys())
    .sort((a, b) => Math.abs(v[b]) - Math.abs(v[a]) || a - b)
    .slice(0, k)
    .sort((a, b) => a - b);
}

describe('topKIndices', () => {
  const rng = Rng.derive(3, 'test', 'topk');
  it('equals the k largest magnitudes by a full sort, indices ascending', () => {
    for (let trial = 0; trial < 200; trial++) {
      const d = 1 + rng.nextInt(300);
      const k = rng.nextInt(d + 1);
      // few distinct magnitudes so that ties are common
      const v = Float64Array.from(
        { length: d },
        () => (rng.nextInt(7) - 3) * (trial % 2 ? 1 : rng.nextFloat()),
      );
      expect(Array.from(topKIndices(v, k))).toEqual(bySort(v, k));
    }
  });

  it('breaks ties toward the lower index', () => {
    expect(Array.from(topKIndices(Float64Array.of(1, -1, 1, 1), 2))).toEqual([0, 1]);
    expect(Array.from(topKIndices(new Float64Array(5), 3))).toEqual([0, 1, 2]);
  });

  it('clamps k to [0, d]', () => {
    const v = Float64Array.of(3, 1, 2);
    expect(topKIndices(v, 0)).toHaveLength(0);
    expect(Array.from(topKIndices(v, 10))).toEqual([0, 1, 2]);
  });

  it('handles adversarial sorted input on a large vector', () => {
    const d = 200_000;
    const v = Float64Array.from({ length: d }, (_, j) => j);
    expect(Array.from(topKIndices(v, 5))).toEqual([d - 5, d - 4, d - 3, d - 2, d - 1]);
  });
});
