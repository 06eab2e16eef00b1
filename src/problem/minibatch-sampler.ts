// Uniform minibatches without replacement within a batch (batches are independent of each other),
// drawn from the seeded Rng the engine hands over, so that a run repeats bit for bit.

import type { Rng } from '../base/rng.js';
import { ProblemError } from './problem-error.js';

/** Draws the sample indices of one minibatch; the engine seeds it per (client, round, step). */
export interface MinibatchSampler {
  next(): Uint32Array;
}

export class UniformMinibatchSampler implements MinibatchSampler {
  private readonly rng: Rng;
  private readonly sampleCount: number;
  /** min(requested size, sampleCount): a batch cannot hold more distinct samples than the shard */
  readonly batchSize: number;

  constructor(rng: Rng, sampleCount: number, batchSize: number) {
    if (!Number.isInteger(sampleCount) || sampleCount < 1 || sampleCount > 0xffffffff) {
      throw new ProblemError(
        'E_PROBLEM_BATCH',
        `a sampler needs a sample count in [1, 2^32), got ${sampleCount}`,
      );
    }
    if (!Number.isInteger(batchSize) || batchSize < 1) {
      throw new ProblemError(
        'E_PROBLEM_BATCH',
        `batch size must be a positive integer, got ${batchSize}`,
      );
    }
    this.rng = rng;
    this.sampleCount = sampleCount;
    this.batchSize = Math.min(batchSize, sampleCount);
  }

  /**
   * The next batch: distinct indices in ascending order, every subset of the batch size equally
   * likely. A batch that covers the shard draws nothing and is the full gradient's sample set.
   */
  next(): Uint32Array {
    if (this.batchSize === this.sampleCount)
      return Uint32Array.from({ length: this.sampleCount }, (_, s) => s);
    return this.rng.sampleWithoutReplacement(this.sampleCount, this.batchSize);
  }
}
