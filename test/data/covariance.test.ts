import { describe, expect, it } from 'vitest';
import { featureScales, featureVariances } from '../../src/data/covariance.js';
import { DataError } from '../../src/data/data-error.js';

describe('featureVariances', () => {
  it('spans exactly [1/conditionNumber, 1], so cond(Sigma) is the knob', () => {
    // cond(Sigma) = lambda_max / lambda_min for a symmetric positive definite matrix
    // (definition; Golub and Van Loan, Matrix Computations, 4th ed., section 2.6).
    for (const [p, kappa] of [
      [2, 10],
      [7, 1000],
      [20, 3.5],
    ] as const) {
      const lambda = featureVariances(p, kappa);
      expect(Math.max(...lambda)).toBe(1);
      expect(Math.max(...lambda) / Math.min(...lambda)).toBeCloseTo(kappa, 10);
    }
  });

  it('log-spaces the eigenvalues: consecutive ratios are all kappa^(1/(p-1))', () => {
    const p = 9;
    const kappa = 256;
    const lambda = featureVariances(p, kappa);
    const ratio = kappa ** (1 / (p - 1));
    for (let j = 1; j < p; j++) expect(lambda[j - 1] / lambda[j]).toBeCloseTo(ratio, 10);
  });

  it('is isotropic for conditionNumber 1 and for one feature', () => {
    expect(Array.from(featureVariances(4, 1))).toEqual([1, 1, 1, 1]);
    expect(Array.from(featureVariances(1, 50))).toEqual([1]);
  });

  it('gives standard deviations as square roots', () => {
    const lambda = featureVariances(5, 100);
    const scales = featureScales(5, 100);
    for (let j = 0; j < 5; j++) expect(scales[j]).toBe(Math.sqrt(lambda[j]));
  });

  it('refuses a condition number below 1 or a feature count below 1', () => {
    expect(() => featureVariances(3, 0.5)).toThrow(DataError);
    expect(() => featureVariances(0, 2)).toThrow(DataError);
  });
});
