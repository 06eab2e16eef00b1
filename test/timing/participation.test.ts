import { describe, expect, it } from 'vitest';
import { participantCount, participantsFor } from '../../src/timing/participation.js';

describe('participantCount', () => {
  it('is max(1, round(fraction m)), a half rounding up', () => {
    // The rule of the timing design; Math.round(2.5) = 3.
    expect(participantCount(0.1, 100)).toBe(10);
    expect(participantCount(0.01, 10)).toBe(1);
    expect(participantCount(1, 7)).toBe(7);
    expect(participantCount(0.5, 5)).toBe(3);
  });

  it('refuses a fraction outside (0, 1]', () => {
    expect(() => participantCount(0, 10)).toThrowError(
      expect.objectContaining({ code: 'E_TIMING_ARGUMENT', fieldPath: 'method.participation' }),
    );
    expect(() => participantCount(1.5, 10)).toThrowError(
      expect.objectContaining({ code: 'E_TIMING_ARGUMENT' }),
    );
  });
});

describe('participantsFor', () => {
  it('returns that many distinct ids, sorted ascending', () => {
    for (let round = 0; round < 20; round++) {
      const ids = participantsFor(0.3, 50, 5, round);
      expect(ids.length).toBe(15);
      for (let j = 1; j < ids.length; j++) expect(ids[j]).toBeGreaterThan(ids[j - 1]);
      expect(ids[ids.length - 1]).toBeLessThan(50);
    }
  });

  it('takes everyone when the fraction is 1', () => {
    expect(Array.from(participantsFor(1, 6, 5, 3))).toEqual([0, 1, 2, 3, 4, 5]);
  });

  it('is fixed by (seed, round) and changes from round to round', () => {
    const first = Array.from(participantsFor(0.2, 100, 11, 0));
    expect(Array.from(participantsFor(0.2, 100, 11, 0))).toEqual(first);
    expect(Array.from(participantsFor(0.2, 100, 11, 1))).not.toEqual(first);
    expect(Array.from(participantsFor(0.2, 100, 12, 0))).not.toEqual(first);
  });

  it('includes each client with probability k/m over many rounds', () => {
    // Uniform sampling of k of m without replacement includes each client with probability
    // k/m; over R rounds its count is Binomial(R, k/m), within 5 standard errors.
    const m = 20;
    const rounds = 2000;
    const k = participantCount(0.25, m);
    const counts = new Array(m).fill(0);
    for (let round = 0; round < rounds; round++)
      for (const id of participantsFor(0.25, m, 8, round)) counts[id]++;
    const p = k / m;
    const standardError = Math.sqrt(rounds * p * (1 - p));
    for (const c of counts) expect(Math.abs(c - rounds * p)).toBeLessThan(5 * standardError);
  });
});
