// Fields that carry a state (every downlink field; on the uplink, the fields a method declares in
// uplinkStateFields, such as FedLin's gradient). Compressing a state itself would zero most of
// it: a client would work from a top-k caricature of x. So, as is common practice, the sender
// sends compressed DIFFERENCES against a replica r of what the receiver already holds:
//   c = C(v - r);  both ends: r <- r + decompress(c);  the receiver's value is r.
// This is error feedback in another guise: v - r is exactly the input not yet delivered, so
// it plays the memory's part, and when v stops changing, v - r shrinks by C's contraction
// every round. With error feedback off the receiver gets C(v) raw; a field whose compressor is
// 'none' at f64 goes dense and exact with no replica. Both ends add the same numbers in the
// same order, so the two replicas stay equal bit for bit as long as no message is lost.

import type { Fields } from '../vec/fields.js';
import { CompressError } from './compress-error.js';
import type { ChannelSpec, RngForField } from './channel.js';
import { compressorForField, downlinkMode, rngForSpec } from './channel.js';
import {
  axpyCompressed,
  decompress,
  validateCompressedVector,
  type CompressedVector,
} from './compressed-vector.js';
import { compress } from './compressor.js';

function replicaFor(replicas: Map<string, Float64Array>, field: string, dim: number): Float64Array {
  let r = replicas.get(field);
  if (r === undefined) {
    r = new Float64Array(dim);
    replicas.set(field, r);
  } else if (r.length !== dim) {
    throw new CompressError(
      'E_COMPRESS_DIMENSION',
      `replicated field "${field}" has dimension ${r.length}, given ${dim}`,
    );
  }
  return r;
}

function snapshotReplicas(
  replicas: ReadonlyMap<string, Float64Array>,
): Record<string, Float64Array> {
  const out: Record<string, Float64Array> = {};
  for (const [field, r] of replicas) out[field] = r.slice();
  return out;
}

function restoreReplicas(
  replicas: Map<string, Float64Array>,
  from: Readonly<Record<string, Float64Array>>,
): void {
  replicas.clear();
  for (const [field, r] of Object.entries(from)) replicas.set(field, Float64Array.from(r));
}

/** Sending side, one per receiver: the replicas of what that receiver holds. */
export class ReplicaEncoder {
  private readonly channel: ChannelSpec;
  /** r per replica-mode field, starting at zero on both ends */
  private readonly replicas = new Map<string, Float64Array>();

  constructor(channel: ChannelSpec) {
    this.channel = channel;
  }

  /** The message for the receiver; replicas advance as if it were delivered. */
  encode(fields: Fields, rngFor?: RngForField): Record<string, CompressedVector> {
    const out: Record<string, CompressedVector> = {};
    for (const [field, v] of Object.entries(fields)) {
      const spec = compressorForField(this.channel, field);
      const rng = rngForSpec(spec, field, rngFor);
      if (downlinkMode(spec) !== 'replica') {
        out[field] = compress(v, spec, rng);
        continue;
      }
      const r = replicaFor(this.replicas, field, v.length);
      const difference = new Float64Array(v.length);
      for (let j = 0; j < v.length; j++) difference[j] = v[j] - r[j];
      const c = compress(difference, spec, rng);
      axpyCompressed(1, c, r);
      out[field] = c;
    }
    return out;
  }

  /** A copy of the sender's replica of a field, or null when the field keeps none. */
  replica(field: string): Float64Array | null {
    return this.replicas.get(field)?.slice() ?? null;
  }

  /** Copies of every replica, by field. */
  snapshot(): Record<string, Float64Array> {
    return snapshotReplicas(this.replicas);
  }

  /** Replaces the replicas by copies of a snapshot's. */
  restore(replicas: Readonly<Record<string, Float64Array>>): void {
    restoreReplicas(this.replicas, replicas);
  }
}

/** Receiving side: its replicas; turns each message into the dense fields to work from. */
export class ReplicaDecoder {
  private readonly channel: ChannelSpec;
  private readonly replicas = new Map<string, Float64Array>();

  constructor(channel: ChannelSpec) {
    this.channel = channel;
  }

  /** Validates, advances the replicas, and returns fresh arrays (a method may not alias state). */
  decode(encoded: Record<string, CompressedVector>): Fields {
    const out: Fields = {};
    for (const [field, cv] of Object.entries(encoded)) {
      validateCompressedVector(cv);
      if (downlinkMode(compressorForField(this.channel, field)) !== 'replica') {
        out[field] = decompress(cv);
        continue;
      }
      const r = replicaFor(this.replicas, field, cv.dim);
      axpyCompressed(1, cv, r);
      out[field] = r.slice();
    }
    return out;
  }

  /** Copies of the receiver's replicas, so that the decoder can move to another thread and back. */
  snapshot(): Record<string, Float64Array> {
    return snapshotReplicas(this.replicas);
  }

  /** Replaces the replicas by copies of a snapshot's. */
  restore(replicas: Readonly<Record<string, Float64Array>>): void {
    restoreReplicas(this.replicas, replicas);
  }
}
