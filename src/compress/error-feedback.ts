// Error feedback (Stich, Cordonnier and Jaggi, NeurIPS 2018; Karimireddy et al., ICML 2019):
// the sender keeps what compression dropped and adds it to the next vector, so that nothing is
// lost, only delayed. With c the value AS RECEIVED (after f32 rounding and d/k scaling):
//   c = C(v + e);  e <- v + e - c.
// Summed over rounds, sum(c) + e = sum(v): the receiver gets every input in the end.

import type { Rng } from '../base/rng.js';
import type { CompressorSpec } from '../scenario/schema.js';
import { CompressError } from './compress-error.js';
import { axpyCompressed, type CompressedVector } from './compressed-vector.js';
import { compress, isExact } from './compressor.js';

/** One channel's sender: its compressor and its memory e. */
export class ErrorFeedbackEncoder {
  private readonly dim: number;
  private readonly spec: CompressorSpec;
  /** An exact compressor drops nothing, and with error feedback off nothing is kept: e stays 0. */
  private readonly keepsMemory: boolean;
  /** e */
  private readonly residual: Float64Array;
  /** v + e, built here so that a failed compression leaves e untouched */
  private readonly corrected: Float64Array;

  constructor(dim: number, spec: CompressorSpec) {
    if (!Number.isInteger(dim) || dim < 1) {
      throw new CompressError(
        'E_COMPRESS_DIMENSION',
        `a channel needs a positive integer dimension, got ${dim}`,
      );
    }
    this.dim = dim;
    this.spec = spec;
    this.keepsMemory = spec.errorFeedback && !isExact(spec);
    this.residual = new Float64Array(dim);
    this.corrected = new Float64Array(this.keepsMemory ? dim : 0);
  }

  /** c = C(v + e), then e <- v + e - c. rng: as for compress (rand-k only). */
  encode(v: Float64Array, rng?: Rng): CompressedVector {
    if (v.length !== this.dim) {
      throw new CompressError(
        'E_COMPRESS_DIMENSION',
        `channel of dimension ${this.dim} given a vector of ${v.length}`,
      );
    }
    if (!this.keepsMemory) return compress(v, this.spec, rng);
    const u = this.corrected;
    const e = this.residual;
    for (let j = 0; j < this.dim; j++) u[j] = v[j] + e[j];
    const c = compress(u, this.spec, rng);
    e.set(u);
    axpyCompressed(-1, c, e);
    return c;
  }

  /** A copy of e. */
  memory(): Float64Array {
    return this.residual.slice();
  }

  /** Sets e to a copy of `memory` (from memory() of an encoder of the same channel), bit for bit. */
  restoreMemory(memory: Float64Array): void {
    if (memory.length !== this.dim) {
      throw new CompressError(
        'E_COMPRESS_DIMENSION',
        `channel of dimension ${this.dim} given a memory of ${memory.length}`,
      );
    }
    this.residual.set(memory);
  }
}
