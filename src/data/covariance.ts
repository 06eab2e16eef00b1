// The synthetic feature covariance: Sigma = diag(lambda_1, ..., lambda_p) with eigenvalues
// log-spaced from 1 down to 1/conditionNumber, so that cond(Sigma) = conditionNumber exactly.
// Diagonal on purpose: the condition number of the least-squares Hessian follows the knob
// directly, and drawing a feature costs one normal and one multiply.

import { DataError } from './data-error.js';

/** lambda_j = conditionNumber^(-j/(p-1)), j = 0..p-1 (a single feature has variance 1). */
export function featureVariances(featureCount: number, conditionNumber: number): Float64Array {
  if (!Number.isInteger(featureCount) || featureCount < 1) {
    throw new DataError(
      'E_DATA_SPEC',
      `data.features must be a positive integer, got ${featureCount}`,
      'data.features',
    );
  }
  if (!(conditionNumber >= 1) || !Number.isFinite(conditionNumber)) {
    throw new DataError(
      'E_DATA_SPEC',
      `data.conditionNumber must be finite and at least 1, got ${conditionNumber}`,
      'data.conditionNumber',
    );
  }
  const variances = new Float64Array(featureCount);
  variances[0] = 1;
  for (let j = 1; j < featureCount; j++)
    variances[j] = conditionNumber ** (-j / (featureCount - 1));
  // Pin the smallest eigenvalue so cond(Sigma) is the knob's value, not a rounding of it.
  if (featureCount > 1) variances[featureCount - 1] = 1 / conditionNumber;
  return variances;
}

/** Standard deviations sqrt(lambda_j): a feature is mu_j + sqrt(lambda_j) z_j with z_j ~ N(0, 1). */
export function featureScales(featureCount: number, conditionNumber: number): Float64Array {
  const scales = featureVariances(featureCount, conditionNumber);
  for (let j = 0; j < scales.length; j++) scales[j] = Math.sqrt(scales[j]);
  return scales;
}
