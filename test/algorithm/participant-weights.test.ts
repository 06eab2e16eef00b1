import { describe, expect, it } from 'vitest';
import type { Upload } from '../../src/algorithm/method.js';
import { renormalizedWeights, weightedFieldSum } from '../../src/algorithm/participant-weights.js';

function upload(clientId: number, weight: number, delta: number[]): Upload {
  return {
    clientId,
    weight,
    localSteps: 1,
    stepSize: 0.1,
    fields: { delta: Float64Array.from(delta) },
  };
}

describe('renormalizedWeights', () => {
  it("rescales the participants' shares p_i / sum_S p_j to sum to one (a 2-of-4 round)", () => {
    // p = (0.1, 0.2, 0.3, 0.4) of which clients 1 and 3 take part: 0.2/0.6 and 0.4/0.6 (arithmetic).
    const weights = renormalizedWeights([upload(1, 0.2, [0]), upload(3, 0.4, [0])]);
    expect(weights[0]).toBeCloseTo(1 / 3, 15);
    expect(weights[1]).toBeCloseTo(2 / 3, 15);
  });

  it('returns no weights for no uploads', () => {
    expect(renormalizedWeights([]).length).toBe(0);
  });
});

describe('weightedFieldSum', () => {
  it('forms sum_i a_i v_i over the named field', () => {
    const uploads = [upload(0, 1, [1, 2]), upload(2, 1, [10, -4])];
    const out = new Float64Array([99, 99]);
    weightedFieldSum(uploads, Float64Array.from([0.5, 0.25]), 'delta', out);
    // 0.5*1 + 0.25*10 = 3 and 0.5*2 + 0.25*(-4) = 0 (arithmetic, exact in binary).
    expect(Array.from(out)).toEqual([3, 0]);
  });
});
