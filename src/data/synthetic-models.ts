// The ground truth behind synthetic data: a common centre x0, each client's own model
// x_i* = x0 + minimizerSpread * u_i, and each client's feature mean mu_i (covariate shift).
// Each is drawn from its own derived stream, so a knob changes only what it names: raising the
// spread moves the client models and leaves x0, the features and the noise draws as they were.

import { Rng } from '../base/rng.js';
import type { ProblemKind } from '../problem/objective.js';

/**
 * ||x0||. With features of variance at most 1, the logistic margin a . x0 has standard
 * deviation at most 2: labels are informative yet not separable, so the L2-logistic optimum
 * stays at a moderate norm. Least squares is indifferent to the scale.
 */
export const CENTRE_NORM = 2;

/** Length of x: p for least squares and logistic, classes * p for softmax (row c is x[c*p, c*p+p)). */
export function parameterDimension(
  kind: ProblemKind,
  featureCount: number,
  classCount: number,
): number {
  return kind === 'softmax' ? classCount * featureCount : featureCount;
}

function standardNormalVector(rng: Rng, length: number): Float64Array {
  const v = new Float64Array(length);
  for (let j = 0; j < length; j++) v[j] = rng.normal();
  return v;
}

/** x0: a seeded direction, uniform on the sphere (a normalized Gaussian), of norm CENTRE_NORM. */
export function syntheticCentre(seed: number, dim: number): Float64Array {
  const x0 = standardNormalVector(Rng.derive(seed, 'centre'), dim);
  let squares = 0;
  for (let j = 0; j < dim; j++) squares += x0[j] * x0[j];
  const factor = CENTRE_NORM / Math.sqrt(squares);
  for (let j = 0; j < dim; j++) x0[j] *= factor;
  return x0;
}

/**
 * x_i* = x0 + minimizerSpread * u_i with u_i = g_i / sqrt(dim), g_i standard normal, so that
 * E||u_i||^2 = 1 and E||x_i* - x0|| is about minimizerSpread. A spread of 0 gives x_i* = x0
 * exactly (x0 + 0 * u_i rounds to x0).
 */
export function clientMinimizer(
  seed: number,
  x0: Float64Array,
  minimizerSpread: number,
  clientId: number,
): Float64Array {
  const dim = x0.length;
  const u = standardNormalVector(Rng.derive(seed, 'minimizer', clientId), dim);
  const factor = minimizerSpread / Math.sqrt(dim);
  const model = new Float64Array(dim);
  for (let j = 0; j < dim; j++) model[j] = x0[j] + factor * u[j];
  return model;
}

/**
 * mu_i = covariateShift * g_i with g_i standard normal in R^p: every coordinate of the client's
 * feature mean is shifted by N(0, covariateShift^2), measured in units of the largest feature
 * standard deviation (1).
 */
export function clientFeatureMean(
  seed: number,
  featureCount: number,
  covariateShift: number,
  clientId: number,
): Float64Array {
  const mean = standardNormalVector(Rng.derive(seed, 'covariate-shift', clientId), featureCount);
  for (let j = 0; j < featureCount; j++) mean[j] *= covariateShift;
  return mean;
}
