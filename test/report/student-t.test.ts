import { describe, expect, it } from 'vitest';
import { logGamma, studentTCdf, studentTQuantile } from '../../src/report/student-t.js';
import { studentTQuantile975 } from '../../src/theory/student-t-quantile.js';

describe('Student t quantile', () => {
  // Percentage points of the t distribution, Abramowitz and Stegun, Handbook of Mathematical
  // Functions, Table 26.10 (three decimals, as printed there).
  const table: [number, number, number][] = [
    [0.975, 4, 2.776],
    [0.975, 9, 2.262],
    [0.975, 1, 12.706],
    [0.95, 1, 6.314],
    [0.995, 10, 3.169],
    [0.9, 20, 1.325],
    [0.975, 30, 2.042],
    [0.995, 2, 9.925],
  ];
  it.each(table)('t_{%s, %s} = %s', (p, nu, t) => {
    expect(studentTQuantile(p, nu)).toBeCloseTo(t, 3);
  });

  it('t_{0.975, nu} agrees with the Cornish-Fisher expansion the band uses (error below 1e-3 from nu = 7)', () => {
    for (const nu of [7, 12, 40, 200]) {
      expect(Math.abs(studentTQuantile(0.975, nu) - studentTQuantile975(nu))).toBeLessThan(1e-3);
    }
  });

  it('its distribution function inverts the quantile and is symmetric', () => {
    for (const nu of [1, 3, 17]) {
      for (const p of [0.6, 0.9, 0.999]) {
        const t = studentTQuantile(p, nu);
        expect(studentTCdf(t, nu)).toBeCloseTo(p, 12);
        expect(studentTCdf(-t, nu)).toBeCloseTo(1 - p, 12);
      }
    }
  });

  it('ln Gamma matches factorials (Gamma(n) = (n-1)!) and Gamma(1/2) = sqrt(pi)', () => {
    expect(logGamma(5)).toBeCloseTo(Math.log(24), 12);
    expect(logGamma(11)).toBeCloseTo(Math.log(3628800), 11);
    expect(logGamma(0.5)).toBeCloseTo(0.5 * Math.log(Math.PI), 12);
  });

  it('refuses a probability below one half or no degrees of freedom, with a code', () => {
    expect(() => studentTQuantile(0.3, 4)).toThrow(
      expect.objectContaining({ code: 'E_STATISTICS_ARGUMENT' }),
    );
    expect(() => studentTQuantile(0.975, 0)).toThrow(/degree of freedom/);
  });
});
