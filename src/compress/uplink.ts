// The uplink (client -> server). A field is one of two kinds (the method says which):
// - an increment (a model delta): the receiver sums what arrives, so each client compresses
//   through its own error-feedback memory and the server uses each message as it is;
// - a state (FedLin's gradient grad f_i(x)): the receiver wants the latest value, so, as on the
//   downlink, the client sends compressed differences against a replica that both ends keep
//   (see replica.ts). At a fixed point the differences vanish, so compression costs no accuracy
//   there; error feedback on the value itself would keep sending top-k caricatures of a dense
//   vector forever and leave a floor.
// Memories and replicas are keyed by field name, so a method must not reuse a field name for two
// different quantities (e.g. across the exchanges of one round).

import type { Fields } from '../vec/fields.js';
import type { ChannelSpec, RngForField } from './channel.js';
import { compressorForField, rngForSpec } from './channel.js';
import {
  decompress,
  validateCompressedVector,
  type CompressedVector,
} from './compressed-vector.js';
import { ErrorFeedbackEncoder } from './error-feedback.js';
import { ReplicaDecoder, ReplicaEncoder } from './replica.js';

/** Client side, one per client: the fields' error-feedback encoders, made on first use. */
export class UplinkEncoder {
  private readonly channel: ChannelSpec;
  private readonly encoders = new Map<string, ErrorFeedbackEncoder>();
  private readonly stateFields: ReadonlySet<string>;
  /** replicas of the state fields, kept exactly as the server keeps them */
  private readonly states: ReplicaEncoder;

  constructor(channel: ChannelSpec, stateFields: readonly string[] = []) {
    this.channel = channel;
    this.stateFields = new Set(stateFields);
    this.states = new ReplicaEncoder(channel);
  }

  /** Compresses every field; a field keeps the dimension it first had (E_DIMENSION otherwise). */
  encode(fields: Fields, rngFor?: RngForField): Record<string, CompressedVector> {
    const out: Record<string, CompressedVector> = {};
    for (const [field, v] of Object.entries(fields)) {
      if (this.stateFields.has(field)) {
        Object.assign(out, this.states.encode({ [field]: v }, rngFor));
        continue;
      }
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

  /**
   * Copies of every field's memory (increments) or replica (states), by field name, so that the
   * encoder can move to another thread and back.
   */
  snapshot(): Record<string, Float64Array> {
    const out: Record<string, Float64Array> = this.states.snapshot();
    for (const [field, encoder] of this.encoders) out[field] = encoder.memory();
    return out;
  }

  /** Replaces the memories and replicas by those of a snapshot taken from an encoder of the same channel. */
  restore(memories: Readonly<Record<string, Float64Array>>): void {
    this.encoders.clear();
    const replicas: Record<string, Float64Array> = {};
    for (const [field, memory] of Object.entries(memories)) {
      if (this.stateFields.has(field)) {
        replicas[field] = memory;
        continue;
      }
      const encoder = new ErrorFeedbackEncoder(
        memory.length,
        compressorForField(this.channel, field),
      );
      encoder.restoreMemory(memory);
      this.encoders.set(field, encoder);
    }
    this.states.restore(replicas);
  }
}

/**
 * Server side, one per client: increments decompressed as they are, state fields advanced in the
 * replica this client's encoder keeps too.
 */
export class UplinkDecoder {
  private readonly stateFields: ReadonlySet<string>;
  private readonly states: ReplicaDecoder;

  constructor(channel: ChannelSpec, stateFields: readonly string[] = []) {
    this.stateFields = new Set(stateFields);
    this.states = new ReplicaDecoder(channel);
  }

  decode(encoded: Record<string, CompressedVector>): Fields {
    const out: Fields = {};
    for (const [field, cv] of Object.entries(encoded)) {
      if (this.stateFields.has(field)) {
        Object.assign(out, this.states.decode({ [field]: cv }));
        continue;
      }
      validateCompressedVector(cv);
      // A dense f64 increment is already the vector: the message owns its arrays (compress and
      // fromWire make them fresh) and the method only reads it, so it is used as it came.
      out[field] =
        cv.indices === null && cv.values instanceof Float64Array ? cv.values : decompress(cv);
    }
    return out;
  }

  /** Copies of the state fields' replicas, by field name (a checkpoint keeps them). */
  snapshot(): Record<string, Float64Array> {
    return this.states.snapshot();
  }

  /** Replaces the state fields' replicas by copies of a snapshot's. */
  restore(replicas: Readonly<Record<string, Float64Array>>): void {
    this.states.restore(replicas);
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
