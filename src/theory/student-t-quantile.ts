// The 97.5% quantile of Student's t distribution, for 95% two-sided intervals of a mean over a
// few dozen replicas. The Cornish-Fisher expansion of t in powers of 1/nu around the normal
// quantile (Abramowitz and Stegun, Handbook of Mathematical Functions, 26.7.5) with its first
// four terms; its error is below 1e-3 from nu = 7 on, where the band uses it (at least 8 replicas).

import { TheoryError } from './theory-error.js';

/** z with Phi(z) = 0.975 (Abramowitz and Stegun, Table 26.5). */
const NORMAL_QUANTILE_975 = 1.959963984540054;
/** The expansion is used from this many degrees of freedom on. */
export const STUDENT_T_DEGREES_MIN = 7;

/** t_{0.975, nu}: the half-width factor of a 95% t-interval with nu degrees of freedom. */
export function studentTQuantile975(degrees: number): number {
  if (!Number.isInteger(degrees) || degrees < STUDENT_T_DEGREES_MIN)
    throw new TheoryError(
      'E_THEORY_ARGUMENT',
      `the t quantile needs an integer of at least ${STUDENT_T_DEGREES_MIN} degrees of freedom, got ${degrees}`,
    );
  const z = NORMAL_QUANTILE_975;
  const z2 = z * z;
  const g1 = (z * (z2 + 1)) / 4;
  const g2 = (z * ((5 * z2 + 16) * z2 + 3)) / 96;
  const g3 = (z * (((3 * z2 + 19) * z2 + 17) * z2 - 15)) / 384;
  const g4 = (z * ((((79 * z2 + 776) * z2 + 1482) * z2 - 1920) * z2 - 945)) / 92160;
  const v = degrees;
  return z + g1 / v + g2 / v ** 2 + g3 / v ** 3 + g4 / v ** 4;
}
