// t_{0.975, nu} against the printed table of Student's t quantiles (NIST/SEMATECH e-Handbook of
// Statistical Methods, section 1.3.6.7.2, "Critical values of the Student's t distribution").

import { describe, expect, it } from 'vitest';
import { studentTQuantile975 } from '../../src/theory/student-t-quantile.js';
import { TheoryError } from '../../src/theory/theory-error.js';
import { codeOf } from '../support/error-code.js';

describe('studentTQuantile975', () => {
  it('matches the table to its three printed decimals', () => {
    const table: [number, number][] = [
      [7, 2.365],
      [10, 2.228],
      [20, 2.086],
      [30, 2.042],
      [60, 2.0],
      [100, 1.984],
    ];
    for (const [degrees, quantile] of table)
      expect(Math.abs(studentTQuantile975(degrees) - quantile)).toBeLessThan(1e-3);
  });

  it('refuses too few degrees of freedom for its expansion', () => {
    expect(codeOf(() => studentTQuantile975(3), TheoryError)).toBe('E_THEORY_ARGUMENT');
  });
});
