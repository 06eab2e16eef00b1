// Synthetic samples: features a ~ N(mu, Sigma) with Sigma = diag(lambda) (covariance.ts), and
// targets drawn from a model x:
//   least squares  b = a . x + noise * N(0, 1)
//   logistic       b ~ Bernoulli(sigmoid(a . x)),            b in {0, 1}
//   softmax        b ~ Categorical(softmax(W a)),            b in {0, ..., classes - 1},
//                  W the classes x p matrix whose row c is x[c*p, c*p+p).
// Features and targets come from two separate streams, so the features of a client are the same
// whatever the problem kind or noise level; only the targets change with them.
//
// With minimizerSpread = 0, noise = 0 and regularization 0, every least-squares client's
// targets are exactly a . x0, so x0 minimizes every f_i, and it is the unique minimizer as soon
// as n_i >= p (the sample Gram matrix of Gaussian features then has full rank with probability
// one): a common minimizer, where every client gradient vanishes at x0, so x0 is a fixed point
// of local steps as well as the global optimum.

import type { ProblemKind } from '../problem/objective.js';
import { DataError } from './data-error.js';
import type { Rng } from '../base/rng.js';

/** The models that label synthetic samples; a perceptron learns from softmax-labelled data. */
export type SampleKind = Exclude<ProblemKind, 'perceptron'>;

export interface SampleModel {
  kind: SampleKind;
  featureCount: number;
  /** softmax: number of classes (ignored otherwise) */
  classCount: number;
  /** sqrt(lambda_j) per feature */
  featureScales: Float64Array;
  /** mu: the feature mean (length featureCount) */
  featureMean: Float64Array;
  /** x: the model that labels the samples (length featureCount, or classes * featureCount) */
  model: Float64Array;
  /** least squares: standard deviation of the target noise */
  noise: number;
}

export interface Samples {
  sampleCount: number;
  featureCount: number;
  /** sampleCount x featureCount, row-major */
  features: Float64Array;
  targets: Float64Array;
}

function checkModel(spec: SampleModel): void {
  const p = spec.featureCount;
  const dim = spec.kind === 'softmax' ? spec.classCount * p : p;
  if (
    spec.featureScales.length !== p ||
    spec.featureMean.length !== p ||
    spec.model.length !== dim
  ) {
    throw new DataError(
      'E_DATA_SPEC',
      `sample model dimensions disagree: ${spec.featureScales.length} scales, ${spec.featureMean.length} means and a model of ${spec.model.length} for p = ${p} (expected ${dim})`,
    );
  }
  if (spec.kind === 'softmax' && !(Number.isInteger(spec.classCount) && spec.classCount >= 2)) {
    throw new DataError(
      'E_DATA_SPEC',
      `problem.classes must be an integer of at least 2, got ${spec.classCount}`,
      'problem.classes',
    );
  }
}

/** sampleCount draws of a ~ N(mu, diag(scales^2)), row-major. */
function drawFeatures(
  rng: Rng,
  sampleCount: number,
  scales: Float64Array,
  mean: Float64Array,
): Float64Array {
  const p = scales.length;
  const features = new Float64Array(sampleCount * p);
  for (let s = 0; s < sampleCount; s++) {
    const row = s * p;
    for (let j = 0; j < p; j++) features[row + j] = mean[j] + scales[j] * rng.normal();
  }
  return features;
}

/** a_s . x over row s of the row-major features, summed in the order of kernels.dot. */
function rowDot(features: Float64Array, row: number, model: Float64Array): number {
  let sum = 0;
  for (let j = 0; j < model.length; j++) sum += features[row + j] * model[j];
  return sum;
}

function leastSquaresTargets(
  rng: Rng,
  features: Float64Array,
  sampleCount: number,
  model: Float64Array,
  noise: number,
): Float64Array {
  const p = model.length;
  const targets = new Float64Array(sampleCount);
  // One noise draw per sample even when noise = 0, so the stream does not depend on the level.
  for (let s = 0; s < sampleCount; s++)
    targets[s] = rowDot(features, s * p, model) + noise * rng.normal();
  return targets;
}

/** sigmoid(z) without overflow for either sign of z. */
function sigmoid(z: number): number {
  if (z >= 0) return 1 / (1 + Math.exp(-z));
  const e = Math.exp(z);
  return e / (1 + e);
}

function logisticLabels(
  rng: Rng,
  features: Float64Array,
  sampleCount: number,
  model: Float64Array,
): Float64Array {
  const p = model.length;
  const labels = new Float64Array(sampleCount);
  for (let s = 0; s < sampleCount; s++) {
    const probability = sigmoid(rowDot(features, s * p, model));
    labels[s] = rng.nextFloat() < probability ? 1 : 0;
  }
  return labels;
}

function softmaxLabels(
  rng: Rng,
  features: Float64Array,
  sampleCount: number,
  model: Float64Array,
  classCount: number,
): Float64Array {
  const p = model.length / classCount;
  const labels = new Float64Array(sampleCount);
  const weights = new Float64Array(classCount);
  for (let s = 0; s < sampleCount; s++) {
    const row = s * p;
    let largest = -Infinity;
    for (let c = 0; c < classCount; c++) {
      let logit = 0;
      for (let j = 0; j < p; j++) logit += model[c * p + j] * features[row + j];
      weights[c] = logit;
      if (logit > largest) largest = logit;
    }
    // Shift by the largest logit so exp never overflows; the draw scales u by the total
    // instead of normalizing every weight.
    let total = 0;
    for (let c = 0; c < classCount; c++) {
      weights[c] = Math.exp(weights[c] - largest);
      total += weights[c];
    }
    const u = rng.nextFloat() * total;
    let label = classCount - 1;
    let cumulative = 0;
    for (let c = 0; c < classCount; c++) {
      cumulative += weights[c];
      if (u < cumulative) {
        label = c;
        break;
      }
    }
    labels[s] = label;
  }
  return labels;
}

/** Targets for given features under the model (labels for logistic and softmax). */
function drawTargets(
  rng: Rng,
  spec: SampleModel,
  features: Float64Array,
  sampleCount: number,
): Float64Array {
  switch (spec.kind) {
    case 'least-squares':
      return leastSquaresTargets(rng, features, sampleCount, spec.model, spec.noise);
    case 'logistic':
      return logisticLabels(rng, features, sampleCount, spec.model);
    case 'softmax':
      return softmaxLabels(rng, features, sampleCount, spec.model, spec.classCount);
  }
}

/** sampleCount samples of the model, features from featureRng and targets from targetRng. */
export function drawSamples(
  featureRng: Rng,
  targetRng: Rng,
  spec: SampleModel,
  sampleCount: number,
): Samples {
  checkModel(spec);
  if (!Number.isInteger(sampleCount) || sampleCount < 1) {
    throw new DataError(
      'E_DATA_SPEC',
      `a synthetic client needs at least one sample, got ${sampleCount}`,
      'data.samplesPerClient',
    );
  }
  const features = drawFeatures(featureRng, sampleCount, spec.featureScales, spec.featureMean);
  const targets = drawTargets(targetRng, spec, features, sampleCount);
  return { sampleCount, featureCount: spec.featureCount, features, targets };
}
