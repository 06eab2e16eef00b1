import { describe, expect, it } from 'vitest';
import { TimingError } from '../../src/timing/errors.js';
import { drawSlowdowns, stragglerCount, type SlowdownSpec } from '../../src/timing/slowdown.js';

// Sample-moment checks use many clients and a tolerance of 5 standard errors of the mean (SE =
// sqrt(Var / n), the central limit theorem): seeded, so each check is deterministic, yet a wrong
// formula moves the mean by far more than that.
const clientCount = 20_000;
const seed = 20240611;

function draw(slowdown: SlowdownSpec, m = clientCount, s = seed): Float64Array {
  return drawSlowdowns({ slowdown }, m, s);
}

function mean(v: Float64Array): number {
  let sum = 0;
  for (let i = 0; i < v.length; i++) sum += v[i];
  return sum / v.length;
}

function minimum(v: Float64Array): number {
  let low = Infinity;
  for (let i = 0; i < v.length; i++) low = Math.min(low, v[i]);
  return low;
}

function fractionAtMost(v: Float64Array, bound: number): number {
  let count = 0;
  for (let i = 0; i < v.length; i++) if (v[i] <= bound) count++;
  return count / v.length;
}

/** erf by Abramowitz and Stegun, Handbook of Mathematical Functions (1964), formula 7.1.26; |error| <= 1.5e-7. */
function erf(x: number): number {
  const sign = Math.sign(x);
  const a = Math.abs(x);
  const t = 1 / (1 + 0.3275911 * a);
  const poly =
    ((((1.061405429 * t - 1.453152027) * t + 1.421413741) * t - 0.284496736) * t + 0.254829592) * t;
  return sign * (1 - poly * Math.exp(-a * a));
}

/** Standard normal CDF. */
function phi(x: number): number {
  return 0.5 * (1 + erf(x / Math.SQRT2));
}

describe('drawSlowdowns', () => {
  it('constant gives the value to every client', () => {
    const s = draw({ kind: 'constant', value: 2.5 }, 50);
    expect(Array.from(s)).toEqual(new Array(50).fill(2.5));
  });

  it('uniform(min, max) has mean (min + max) / 2 and stays in [min, max)', () => {
    // Moments of the continuous uniform distribution: mean (a + b)/2, variance (b - a)^2 / 12.
    const min = 1;
    const max = 3;
    const s = draw({ kind: 'uniform', min, max });
    const standardError = Math.sqrt((max - min) ** 2 / 12 / clientCount);
    expect(Math.abs(mean(s) - (min + max) / 2)).toBeLessThan(5 * standardError);
    expect(minimum(s)).toBeGreaterThanOrEqual(min);
    expect(s.every((v) => v < max)).toBe(true);
  });

  it('lognormal(sigma) = exp(sigma |Z|) matches the half-normal moment generating function', () => {
    // Our definition: s = exp(sigma |Z|), Z ~ N(0, 1). Its moments follow from
    // E[exp(t |Z|)] = 2 exp(t^2 / 2) Phi(t) (complete the square in 2 int_0^inf e^{tz} phi(z) dz):
    // mean with t = sigma, second moment with t = 2 sigma.
    const sigma = 0.5;
    const s = draw({ kind: 'lognormal', sigma });
    const expectedMean = 2 * Math.exp(sigma ** 2 / 2) * phi(sigma);
    const secondMoment = 2 * Math.exp(2 * sigma ** 2) * phi(2 * sigma);
    const standardError = Math.sqrt((secondMoment - expectedMean ** 2) / clientCount);
    expect(Math.abs(mean(s) - expectedMean)).toBeLessThan(5 * standardError);
    expect(minimum(s)).toBeGreaterThanOrEqual(1);
    // P(s <= exp(sigma)) = P(|Z| <= 1) = erf(1 / sqrt 2), about 0.6827 (the 68-95-99.7 rule);
    // binomial standard error sqrt(p (1 - p) / n).
    const p = erf(1 / Math.SQRT2);
    expect(Math.abs(fractionAtMost(s, Math.exp(sigma)) - p)).toBeLessThan(
      5 * Math.sqrt((p * (1 - p)) / clientCount),
    );
  });

  it('lognormal with sigma 0 gives every client 1', () => {
    expect(Array.from(draw({ kind: 'lognormal', sigma: 0 }, 100))).toEqual(new Array(100).fill(1));
  });

  it('pareto(shape a, scale 1) has mean a / (a - 1), tail t^-a and s >= 1', () => {
    // Pareto type I with scale 1: mean a/(a-1) for a > 1, variance a / ((a-1)^2 (a-2)) for a > 2,
    // survival P(s > t) = t^(-a) (the distribution's definition).
    const a = 4;
    const s = draw({ kind: 'pareto', shape: a });
    const variance = a / ((a - 1) ** 2 * (a - 2));
    expect(Math.abs(mean(s) - a / (a - 1))).toBeLessThan(5 * Math.sqrt(variance / clientCount));
    expect(minimum(s)).toBeGreaterThanOrEqual(1);
    const tail = 2 ** -a;
    const observedTail = 1 - fractionAtMost(s, 2);
    expect(Math.abs(observedTail - tail)).toBeLessThan(
      5 * Math.sqrt((tail * (1 - tail)) / clientCount),
    );
  });

  it('pareto with a shape so small that a draw overflows is refused with a code', () => {
    // shape 0.001: s = (1 - U)^(-1000) exceeds the largest double once 1 - U < 2^(-1.024), about
    // half the clients.
    expect(() => draw({ kind: 'pareto', shape: 0.001 }, 100)).toThrowError(
      expect.objectContaining({
        code: 'E_TIMING_SLOWDOWN_NOT_FINITE',
        fieldPath: 'timing.slowdown',
      }),
    );
    expect(() => draw({ kind: 'pareto', shape: 0.001 }, 100)).toThrow(TimingError);
  });

  it('two-class makes exactly round(fraction m) clients factor times slower', () => {
    // The definition of the two-class mix; Math.round rounds a half up (0.5 * 7 = 3.5 -> 4).
    const cases = [
      { fraction: 0.25, m: 40, stragglers: 10 },
      { fraction: 0.3, m: 10, stragglers: 3 },
      { fraction: 0.5, m: 7, stragglers: 4 },
      { fraction: 0, m: 10, stragglers: 0 },
      { fraction: 1, m: 10, stragglers: 10 },
    ];
    const factor = 4;
    for (const { fraction, m, stragglers } of cases) {
      expect(stragglerCount(fraction, m)).toBe(stragglers);
      const s = draw({ kind: 'two-class', fraction, factor }, m);
      expect(s.filter((v) => v === factor).length).toBe(stragglers);
      expect(s.filter((v) => v === 1).length).toBe(m - stragglers);
    }
  });

  it('two-class picks a seeded set of stragglers: different seeds pick different sets', () => {
    const spec: SlowdownSpec = { kind: 'two-class', fraction: 0.5, factor: 3 };
    expect(Array.from(draw(spec, 100, 1))).toEqual(Array.from(draw(spec, 100, 1)));
    expect(Array.from(draw(spec, 100, 1))).not.toEqual(Array.from(draw(spec, 100, 2)));
  });

  it('is a pure function of the seed, and a client keeps its value when clients are added', () => {
    const spec: SlowdownSpec = { kind: 'lognormal', sigma: 1 };
    const small = draw(spec, 10, 7);
    const large = draw(spec, 30, 7);
    expect(Array.from(draw(spec, 10, 7))).toEqual(Array.from(small));
    expect(Array.from(large.subarray(0, 10))).toEqual(Array.from(small));
    expect(Array.from(draw(spec, 10, 8))).not.toEqual(Array.from(small));
  });

  it('refuses a client count that is not a positive integer', () => {
    expect(() => draw({ kind: 'constant', value: 1 }, 0)).toThrowError(
      expect.objectContaining({ code: 'E_TIMING_ARGUMENT' }),
    );
    expect(() => draw({ kind: 'constant', value: 1 }, 2.5)).toThrowError(
      expect.objectContaining({ code: 'E_TIMING_ARGUMENT' }),
    );
  });
});
