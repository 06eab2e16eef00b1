import { describe, expect, it } from 'vitest';
import { TimingError } from '../../src/timing/errors.js';
import { localStepsFor } from '../../src/timing/local-steps.js';

describe('localStepsFor', () => {
  it('gives one count to every client', () => {
    expect(Array.from(localStepsFor(5, 4, 1))).toEqual([5, 5, 5, 5]);
  });

  it('takes a list as one count per client', () => {
    expect(Array.from(localStepsFor([1, 2, 3], 3, 1))).toEqual([1, 2, 3]);
  });

  it('refuses a list whose length is not the client count, naming method.localSteps', () => {
    let caught: unknown = null;
    try {
      localStepsFor([1, 2, 3], 4, 1);
    } catch (error) {
      caught = error;
    }
    expect(caught).toBeInstanceOf(TimingError);
    expect(caught).toMatchObject({
      code: 'E_TIMING_LOCAL_STEPS_LENGTH',
      fieldPath: 'method.localSteps',
    });
    expect((caught as Error).message).toContain('method.localSteps');
  });

  it('draws a uniform range per client: every value in range, each about equally often', () => {
    // Discrete uniform on {a..b}: mean (a + b)/2, variance ((b - a + 1)^2 - 1)/12; the sample
    // mean stays within 5 standard errors (central limit theorem).
    const [a, b] = [2, 6];
    const m = 10_000;
    const steps = localStepsFor({ uniform: [a, b] }, m, 42);
    const counts = new Array(b + 1).fill(0);
    for (const s of steps) counts[s]++;
    expect(counts.slice(0, a).every((c) => c === 0)).toBe(true);
    expect(counts.slice(a).every((c) => c > 0)).toBe(true);
    const mean = steps.reduce((x, y) => x + y, 0) / m;
    const variance = ((b - a + 1) ** 2 - 1) / 12;
    expect(Math.abs(mean - (a + b) / 2)).toBeLessThan(5 * Math.sqrt(variance / m));
  });

  it('a uniform draw is fixed by the seed and a client keeps its count when clients are added', () => {
    const spec = { uniform: [1, 100] as [number, number] };
    const small = localStepsFor(spec, 20, 3);
    expect(Array.from(localStepsFor(spec, 20, 3))).toEqual(Array.from(small));
    expect(Array.from(localStepsFor(spec, 40, 3).subarray(0, 20))).toEqual(Array.from(small));
    expect(Array.from(localStepsFor(spec, 20, 4))).not.toEqual(Array.from(small));
  });

  it('a range of one value gives that value', () => {
    expect(Array.from(localStepsFor({ uniform: [7, 7] }, 3, 1))).toEqual([7, 7, 7]);
  });
});
