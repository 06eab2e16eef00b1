import { describe, expect, it } from 'vitest';
import { Rng } from '../../src/base/rng.js';
import {
  BOOTSTRAP_RULE,
  figureStatistics,
  sampleSkewness,
  tInterval,
} from '../../src/report/repeat-statistics.js';

const INTERVALS = 200;
const CONFIDENCE = 0.95;
// Each interval covers the mean independently with probability 0.95, so the count of covering
// intervals is Binomial(200, 0.95): mean 190, standard deviation sqrt(200 * 0.95 * 0.05) = 3.08.
// Three standard deviations (common practice for a test that must not flake): 181 or more.
const COVERING_MIN = 181;

function normalSample(rng: Rng, n: number, mean: number, sd: number): number[] {
  return Array.from({ length: n }, () => mean + sd * rng.normal());
}

function exponentialSample(rng: Rng, n: number, mean: number): number[] {
  return Array.from({ length: n }, () => -mean * Math.log(1 - rng.nextFloat()));
}

describe('repeat statistics', () => {
  it('200 t-intervals over normal samples of 6 contain the true mean at about 95%', () => {
    const rng = Rng.derive(1, 'coverage-normal');
    const trueMean = 3;
    let covering = 0;
    for (let i = 0; i < INTERVALS; i++) {
      const s = figureStatistics(normalSample(rng, 6, trueMean, 2), CONFIDENCE);
      expect(s.method).toBe('t');
      if (s.lower! <= trueMean && trueMean <= s.upper!) covering++;
    }
    expect(covering).toBeGreaterThanOrEqual(COVERING_MIN);
    expect(covering).toBeLessThan(INTERVALS);
  });

  it('200 intervals over skewed (exponential) samples of 40 choose the bootstrap and cover at about 95%', () => {
    // The exponential's skewness is 2, past BOOTSTRAP_RULE.skewnessMin. A percentile bootstrap
    // under-covers by O(1/n) on skewed data (common practice); at n = 40 that is about one
    // point, within the binomial tolerance above.
    const rng = Rng.derive(2, 'coverage-exponential');
    const trueMean = 5;
    let covering = 0;
    let bootstrapped = 0;
    for (let i = 0; i < INTERVALS; i++) {
      const s = figureStatistics(exponentialSample(rng, 40, trueMean), CONFIDENCE);
      if (s.method === 'bootstrap') bootstrapped++;
      if (s.lower! <= trueMean && trueMean <= s.upper!) covering++;
    }
    expect(bootstrapped).toBeGreaterThan(INTERVALS * 0.8);
    expect(covering).toBeGreaterThanOrEqual(COVERING_MIN);
    expect(covering).toBeLessThan(INTERVALS);
  });

  it('a 99% interval is wider than a 95% one, and the t-interval is the textbook one', () => {
    const values = [1, 2, 3, 4, 5];
    // mean 3, sd sqrt(2.5), t_{0.975,4} = 2.776 (Abramowitz and Stegun, Table 26.10)
    const [lower, upper] = tInterval(values, 0.95);
    expect((upper - lower) / 2).toBeCloseTo((2.776 * Math.sqrt(2.5)) / Math.sqrt(5), 2);
    const wide = figureStatistics(values, 0.99);
    expect(wide.upper! - wide.lower!).toBeGreaterThan(upper - lower);
  });

  it('missing repeats are counted, not averaged; one value has no interval', () => {
    const s = figureStatistics([4, null, 6, null], CONFIDENCE);
    expect(s).toMatchObject({ n: 2, missing: 2, mean: 5, method: 't' });
    expect(figureStatistics([7, null], CONFIDENCE)).toEqual({
      n: 1,
      missing: 1,
      mean: 7,
      sd: null,
      lower: null,
      upper: null,
      method: 'none',
    });
    expect(figureStatistics([null, null], CONFIDENCE).mean).toBeNull();
  });

  it('skewness below the rule or too few values keeps the t-interval', () => {
    const skewedFew = [1, 1, 1, 1, 1, 1, 1, 1, 100];
    expect(skewedFew.length).toBeLessThan(BOOTSTRAP_RULE.samplesMin);
    expect(Math.abs(sampleSkewness(skewedFew))).toBeGreaterThan(BOOTSTRAP_RULE.skewnessMin);
    expect(figureStatistics(skewedFew, CONFIDENCE).method).toBe('t');
    expect(sampleSkewness([1, 2, 3, 4, 5, 6, 7, 8, 9, 10])).toBeCloseTo(0, 12);
  });
});
