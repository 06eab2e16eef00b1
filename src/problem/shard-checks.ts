// The invariants an objective relies on, checked once where the objective is built (shard shape,
// finite data, lambda) or at each call that takes outside indices (a minibatch).

import type { Shard } from './shard.js';
import { allFinite } from '../vec/kernels.js';
import { ProblemError } from './problem-error.js';

/** Throws unless the shard has at least one sample, arrays of the stated sizes and finite data. */
export function checkShard(shard: Shard): void {
  const { sampleCount, featureCount, features, targets } = shard;
  if (!Number.isInteger(sampleCount) || sampleCount < 1) {
    throw new ProblemError(
      'E_PROBLEM_SHARD_SHAPE',
      `client ${shard.clientId}: an objective needs at least one sample, got ${sampleCount}`,
    );
  }
  if (!Number.isInteger(featureCount) || featureCount < 1) {
    throw new ProblemError(
      'E_PROBLEM_SHARD_SHAPE',
      `client ${shard.clientId}: featureCount must be a positive integer, got ${featureCount}`,
    );
  }
  if (features.length !== sampleCount * featureCount) {
    throw new ProblemError(
      'E_PROBLEM_SHARD_SHAPE',
      `client ${shard.clientId}: features hold ${features.length} values, expected ${sampleCount} x ${featureCount}`,
    );
  }
  if (targets.length !== sampleCount) {
    throw new ProblemError(
      'E_PROBLEM_SHARD_SHAPE',
      `client ${shard.clientId}: ${targets.length} targets for ${sampleCount} samples`,
    );
  }
  if (!allFinite(features) || !allFinite(targets)) {
    throw new ProblemError(
      'E_PROBLEM_NOT_FINITE',
      `client ${shard.clientId}: features and targets must be finite`,
    );
  }
}

/** Throws unless lambda is finite and non-negative. */
export function checkRegularization(lambda: number): void {
  if (!Number.isFinite(lambda) || lambda < 0) {
    throw new ProblemError(
      'E_PROBLEM_SPEC',
      `regularization must be finite and >= 0, got ${lambda}`,
    );
  }
}

/** Throws unless the batch is non-empty and every index names a sample of the shard. */
export function checkBatch(sampleIndices: Uint32Array, sampleCount: number): void {
  if (sampleIndices.length === 0)
    throw new ProblemError('E_PROBLEM_BATCH', 'a minibatch needs at least one sample');
  for (let t = 0; t < sampleIndices.length; t++) {
    if (sampleIndices[t] >= sampleCount) {
      throw new ProblemError(
        'E_PROBLEM_BATCH',
        `minibatch index ${sampleIndices[t]} is outside the shard of ${sampleCount} samples`,
      );
    }
  }
}
