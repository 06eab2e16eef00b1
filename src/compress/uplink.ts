// The uplink (client -> server). Each client compresses each field through its own
// error-feedback memory; the server decompresses and uses the value directly, keeping no state
// per client. Memories are keyed by field name, so a method must not reuse a field name for two
// different quantities (e.g. across the exchanges of one round).

import type { Fields } from '../algorithm/method.js';
import type { ChannelSpec, RngForField } from './channel.js';
import { compressorForField, rngForSpec } from './channel.js';
import { decompress, validateCompressedVector, type CompressedVector } from './compressed-vector.js';
import { ErrorFeedbackEncoder } from './error-feedback.js';

/** Client side, one per client: the fields' error-feedback encoders, made on first use. */
export class UplinkEncoder {
  private readonly channel: ChannelSpec;
  private readonly encoders = new Map<string, ErrorFeedbackEncoder>();

  constructor(channel: ChannelSpec) {
    this.channel = channel;
  }

  /** Compresses every field; a field keeps the dimension it first had (E_DIMENSION otherwise). */
  encode(fields: Fields, rngFor?: RngForField): Record<string, CompressedVector> {
    const out: Record<string, CompressedVector> = {};
    for (const [field, v] of Object.entries(fields)) {
      const spec = compressorForField(this.channel, field);
      let encoder = this.encoders.get(field);
      if (encoder === undefined) {
        encoder = new ErrorFeedbackEncoder(v.length, spec);
        this.encoders.set(field, encoder);
      }
      out[field] = encoder.encode(v, rngForSpec(spec, field, rngFor));
    }
    return out;
  }

  /** A copy of a field's error-feedback memory, or null before the field's first use. */
  memory(field: string): Float64Array | null {
    return this.encoders.get(field)?.memory() ?? null;
  }
}

/** Server side: every field validated and decompressed to a dense vector. */
export function decodeFields(encoded: Record<string, CompressedVector>): Fields {
  const out: Fields = {};
  for (const [field, cv] of Object.entries(encoded)) {
    validateCompressedVector(cv);
    out[field] = decompress(cv);
  }
  return out;
}
