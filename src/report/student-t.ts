// Student's t distribution for the confidence intervals of repeated runs: its distribution
// function through the regularized incomplete beta function, I_x(a, b), evaluated by its
// continued fraction (Abramowitz and Stegun, Handbook of Mathematical Functions, 26.5.8 and
// 26.7.1), and its quantile by bisection on that function, which is monotone in t. Bisection is
// slow beside a closed-form approximation, but a comparison asks for a handful of quantiles, and
// it is exact to the last bits for any confidence and any degrees of freedom.

import { ReportError } from './report-error.js';

/** Lanczos coefficients for g = 7, n = 9 (common practice: the set most libraries ship). */
const LANCZOS = [
  0.99999999999980993, 676.5203681218851, -1259.1392167224028, 771.32342877765313,
  -176.61502916214059, 12.507343278686905, -0.13857109526572012, 9.9843695780195716e-6,
  1.5056327351493116e-7,
];

/** ln Gamma(x) for x > 0 by the Lanczos approximation; relative error near 1e-15. */
export function logGamma(x: number): number {
  if (x < 0.5) return Math.log(Math.PI / Math.sin(Math.PI * x)) - logGamma(1 - x);
  const z = x - 1;
  let sum = LANCZOS[0];
  for (let i = 1; i < LANCZOS.length; i++) sum += LANCZOS[i] / (z + i);
  const t = z + 7.5;
  return 0.5 * Math.log(2 * Math.PI) + (z + 0.5) * Math.log(t) - t + Math.log(sum);
}

const FRACTION_TERMS_MAX = 500;
const FRACTION_TOLERANCE = 1e-15;
const TINY = 1e-300;

/** The continued fraction of I_x(a, b) (A&S 26.5.8), by the modified Lentz method. */
function betaFraction(x: number, a: number, b: number): number {
  let c = 1;
  let d = 1 - ((a + b) * x) / (a + 1);
  if (Math.abs(d) < TINY) d = TINY;
  d = 1 / d;
  let h = d;
  for (let m = 1; m <= FRACTION_TERMS_MAX; m++) {
    const m2 = 2 * m;
    const even = (m * (b - m) * x) / ((a + m2 - 1) * (a + m2));
    d = 1 + even * d;
    c = 1 + even / c;
    if (Math.abs(d) < TINY) d = TINY;
    if (Math.abs(c) < TINY) c = TINY;
    d = 1 / d;
    h *= d * c;
    const odd = (-(a + m) * (a + b + m) * x) / ((a + m2) * (a + m2 + 1));
    d = 1 + odd * d;
    c = 1 + odd / c;
    if (Math.abs(d) < TINY) d = TINY;
    if (Math.abs(c) < TINY) c = TINY;
    d = 1 / d;
    const step = d * c;
    h *= step;
    if (Math.abs(step - 1) < FRACTION_TOLERANCE) break;
  }
  return h;
}

/** The regularized incomplete beta function I_x(a, b) for 0 <= x <= 1, a, b > 0. */
export function regularizedBeta(x: number, a: number, b: number): number {
  if (x <= 0) return 0;
  if (x >= 1) return 1;
  const front = Math.exp(
    logGamma(a + b) - logGamma(a) - logGamma(b) + a * Math.log(x) + b * Math.log1p(-x),
  );
  // The fraction converges fast for x below (a + 1) / (a + b + 2); above, use the symmetry.
  if (x < (a + 1) / (a + b + 2)) return (front * betaFraction(x, a, b)) / a;
  return 1 - (front * betaFraction(1 - x, b, a)) / b;
}

/** P(T <= t) for Student's t with `degrees` degrees of freedom (A&S 26.7.1). */
export function studentTCdf(t: number, degrees: number): number {
  const tail = 0.5 * regularizedBeta(degrees / (degrees + t * t), degrees / 2, 0.5);
  return t >= 0 ? 1 - tail : tail;
}

const BISECTION_STEPS = 200;

/** t with P(T <= t) = probability, for 0.5 <= probability < 1 and degrees >= 1. */
export function studentTQuantile(probability: number, degrees: number): number {
  if (!(probability >= 0.5 && probability < 1) || !(degrees >= 1))
    throw new ReportError(
      'E_STATISTICS_ARGUMENT',
      `the t quantile needs a probability in [0.5, 1) and at least 1 degree of freedom, got ${probability} and ${degrees}`,
    );
  let low = 0;
  let high = 1;
  while (studentTCdf(high, degrees) < probability) high *= 2;
  for (let i = 0; i < BISECTION_STEPS && high - low > 1e-14 * high; i++) {
    const middle = (low + high) / 2;
    if (studentTCdf(middle, degrees) < probability) low = middle;
    else high = middle;
  }
  return (low + high) / 2;
}
