// The compressors of a channel: none, top-k and rand-k, each returning the wire form of what
// the receiver will hold. top-k keeps the k entries of largest magnitude (ties to the lower
// index, so runs repeat); rand-k keeps a seeded uniform k-subset, scaled by d/k when unbiased
// (Stich, Cordonnier and Jaggi, NeurIPS 2018, analyse both with error feedback).

import type { Rng } from '../base/rng.js';
import type { CompressorSpec } from '../scenario/schema.js';
import { allFinite } from '../vec/kernels.js';
import { topKIndices } from '../vec/topk.js';
import { CompressError } from './compress-error.js';
import type { CompressedVector } from './compressed-vector.js';
import { toWireForm } from './wire-form.js';

/**
 * A decimal fraction is rarely exact in binary: 0.07 * 100 evaluates to 7.000000000000001,
 * whose ceiling would keep 8 entries where the user meant 7. Products this close to an
 * integer are taken as that integer.
 */
const INTEGER_SNAP_RELATIVE = 1e-9;

/** true when the compressor sends every entry at full width: dense, exact, no memory needed. */
export function isExact(spec: CompressorSpec): boolean {
  return spec.kind === 'none' && spec.values === 'f64';
}

/** k for a dimension: the count, or ceil(fraction * dim), clamped to [1, dim]; dim for 'none'. */
export function keptCount(dim: number, spec: CompressorSpec): number {
  if (spec.kind === 'none') return dim;
  let k: number;
  if (spec.count !== undefined) {
    k = spec.count;
  } else if (spec.fraction !== undefined) {
    const product = spec.fraction * dim;
    const nearest = Math.round(product);
    k =
      Math.abs(product - nearest) <= INTEGER_SNAP_RELATIVE * Math.max(1, nearest)
        ? nearest
        : Math.ceil(product);
  } else {
    throw new CompressError('E_COMPRESS_SPEC', `${spec.kind} needs a fraction or a count`);
  }
  return Math.min(dim, Math.max(1, k));
}

/** v[indices] * factor at the wire width; an f32 store rounds to nearest as Math.fround does. */
function gather(
  v: Float64Array,
  indices: Uint32Array,
  factor: number,
  width: CompressorSpec['values'],
): Float64Array | Float32Array {
  const out = width === 'f64' ? new Float64Array(indices.length) : new Float32Array(indices.length);
  for (let i = 0; i < indices.length; i++) out[i] = v[indices[i]] * factor;
  return out;
}

/** A finite f64 may still overflow f32, or the d/k scaling; the receiver must get finite values. */
function assertValuesFinite(values: Float64Array | Float32Array, spec: CompressorSpec): void {
  for (let i = 0; i < values.length; i++) {
    if (!Number.isFinite(values[i])) {
      throw new CompressError(
        'E_COMPRESS_NOT_FINITE',
        `a kept value is not finite at width ${spec.values} after ${spec.kind}`,
      );
    }
  }
}

/**
 * C(v) in wire form. rand-k draws from `rng`, which the caller derives from (plan seed, round,
 * client, field) so that both runtimes draw the same subsets; the other kinds ignore it.
 * v is not kept: the result owns its arrays.
 */
export function compress(v: Float64Array, spec: CompressorSpec, rng?: Rng): CompressedVector {
  const dim = v.length;
  if (dim < 1)
    throw new CompressError('E_COMPRESS_DIMENSION', 'cannot compress a vector of dimension 0');
  if (!allFinite(v))
    throw new CompressError(
      'E_COMPRESS_NOT_FINITE',
      'cannot compress a vector with a NaN or an infinity',
    );
  let result: CompressedVector;
  switch (spec.kind) {
    case 'none':
      result = {
        dim,
        indices: null,
        values: spec.values === 'f64' ? v.slice() : Float32Array.from(v),
      };
      break;
    case 'top-k': {
      const indices = topKIndices(v, keptCount(dim, spec));
      result = toWireForm(dim, indices, gather(v, indices, 1, spec.values));
      break;
    }
    case 'rand-k': {
      if (rng === undefined)
        throw new CompressError('E_COMPRESS_RNG_REQUIRED', 'rand-k needs a seeded Rng');
      const k = keptCount(dim, spec);
      const indices = rng.sampleWithoutReplacement(dim, k);
      result = toWireForm(
        dim,
        indices,
        gather(v, indices, spec.unbiased ? dim / k : 1, spec.values),
      );
      break;
    }
  }
  if (!isExact(spec)) assertValuesFinite(result.values, spec);
  return result;
}
