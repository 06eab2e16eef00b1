import { describe, expect, it } from 'vitest';
import { VirtualClock } from '../../src/timing/virtual-clock.js';

describe('VirtualClock', () => {
  it('starts at zero and adds round durations', () => {
    const clock = new VirtualClock();
    expect(clock.now()).toBe(0);
    expect(clock.advance(1.5)).toBe(1.5);
    clock.advance(0.25);
    expect(clock.now()).toBe(1.75);
  });

  it('keeps a long run of small rounds exact to a few ulps', () => {
    // 10^6 rounds of 0.001 s: the exact sum of those doubles rounds to 1000. A plain running
    // sum drifts by about 1.7e-8 here (asserted below, so the check can tell the two apart); compensated summation
    // (Neumaier, ZAMM 54, 1974) stays within rounding of the last step.
    const clock = new VirtualClock();
    let plain = 0;
    for (let round = 0; round < 1_000_000; round++) {
      clock.advance(0.001);
      plain += 0.001;
    }
    expect(Math.abs(clock.now() - 1000)).toBeLessThan(1e-12);
    expect(Math.abs(plain - 1000)).toBeGreaterThan(1e-12);
  });

  it('refuses a negative or non-finite duration', () => {
    const clock = new VirtualClock();
    expect(() => clock.advance(-1)).toThrowError(
      expect.objectContaining({ code: 'E_TIMING_ARGUMENT' }),
    );
    expect(() => clock.advance(Number.POSITIVE_INFINITY)).toThrowError(
      expect.objectContaining({ code: 'E_TIMING_ARGUMENT' }),
    );
    expect(clock.now()).toBe(0);
  });
});
