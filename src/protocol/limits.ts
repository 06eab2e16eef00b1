// Every network input is bounded. Before the plan is known (the handshake) fixed limits apply;
// the welcome then carries limits derived from the plan: a frame limit just above the largest
// legal down or up, the field count and dimension of the method's vectors, the worker's share
// of clients. Both ends apply the same numbers.

import { z } from 'zod';
import type { FieldDims } from './field-dims.js';

export const protocolLimitsSchema = z
  .object({
    /** largest MessagePack frame a receiver decodes (WebSocket framing not included) */
    maxFrameBytes: z.number().int().positive().max(Number.MAX_SAFE_INTEGER),
    /** most vectors in one down or up */
    maxFieldsPerMessage: z.number().int().positive(),
    /** most clients one worker hosts (welcome assignments, hello capacity) */
    maxClientsPerWorker: z.number().int().positive(),
    /** largest vector dimension */
    maxVectorDim: z.number().int().positive().max(Number.MAX_SAFE_INTEGER),
    /** UTF-16 code units of a worker name */
    maxWorkerNameLength: z.number().int().positive().max(1024),
    /** UTF-16 code units of an error message's text (capped so that an error always fits a control frame) */
    maxErrorMessageLength: z.number().int().positive().max(16_384),
    /** each end sends a heartbeat this often */
    heartbeatIntervalSeconds: z.number().positive().finite(),
    /** a peer silent this long is gone */
    heartbeatSilenceSeconds: z.number().positive().finite(),
  })
  .strict()
  .refine((l) => l.heartbeatSilenceSeconds > l.heartbeatIntervalSeconds, {
    message: 'heartbeatSilenceSeconds must exceed heartbeatIntervalSeconds',
    path: ['heartbeatSilenceSeconds'],
  });

export type ProtocolLimits = z.infer<typeof protocolLimitsSchema>;

/** Worst-case bytes of everything in a down or up but its vectors: keys, six numbers, the exchange name (NAME_LENGTH_MAX ASCII characters). */
const MESSAGE_ENVELOPE_BYTES = 1024;
/** Worst-case bytes of one field around its payload: the name, the five keys of a wire vector, three numbers, two bin headers. */
const FIELD_ENVELOPE_BYTES = 512;
/**
 * Worst-case bytes per vector entry: 8 for an f64 value plus at most 1 for its index. The
 * index stream of any subset of [0, d) is at most d bytes: a gap g (coded as g, the distance
 * minus one) takes at most g + 1 varint bytes, and the gaps plus one sum to the last index
 * plus one.
 */
const ENTRY_BYTES_MAX = 9;
/** Floor of any frame limit, so that control messages (error, heartbeat, done) always fit. */
const CONTROL_FRAME_BYTES = 64 * 1024;

/** Limits before a plan is known: only challenge, hello, welcome, heartbeat, error and done travel. */
export const HANDSHAKE_LIMITS: ProtocolLimits = {
  // The welcome carries the plan: a scenario is at most a few hundred kilobytes (10,000
  // per-client counts and a 10,000-character description at the schema's bounds).
  maxFrameBytes: 4 * 1024 * 1024,
  maxFieldsPerMessage: 1,
  // clients.count is at most 10,000 in the scenario schema.
  maxClientsPerWorker: 10_000,
  maxVectorDim: 1,
  maxWorkerNameLength: 128,
  maxErrorMessageLength: 1024,
  heartbeatIntervalSeconds: 5,
  // Six missed beats: a busy event loop may delay a few, a dead peer misses them all.
  heartbeatSilenceSeconds: 30,
};

function assertFieldDims(fieldDims: FieldDims): void {
  for (const [exchange, fields] of Object.entries(fieldDims)) {
    for (const [field, dim] of Object.entries(fields)) {
      if (!Number.isSafeInteger(dim) || dim < 1) {
        throw new RangeError(
          `fieldDims.${exchange}.${field}: dimension must be a positive integer, got ${dim}`,
        );
      }
    }
  }
}

/**
 * The frame limit for one direction: the largest legal down or up of any exchange (every
 * field at its dimension, every entry carried, with an index, at 8 bytes a value) plus the
 * envelope, and never below the size of a control message.
 */
export function frameLimitBytesFor(fieldDims: FieldDims): number {
  assertFieldDims(fieldDims);
  let largestBytes = CONTROL_FRAME_BYTES;
  for (const fields of Object.values(fieldDims)) {
    let bytes = MESSAGE_ENVELOPE_BYTES;
    for (const dim of Object.values(fields)) bytes += FIELD_ENVELOPE_BYTES + ENTRY_BYTES_MAX * dim;
    largestBytes = Math.max(largestBytes, bytes);
  }
  return largestBytes;
}

export interface PlanShape {
  /** vectors going down, per exchange */
  downFieldDims: FieldDims;
  /** vectors going up, per exchange */
  upFieldDims: FieldDims;
  /** clients the worker hosts */
  clientsPerWorker: number;
  /** the largest client state a state message may carry: float64 values and tree text bytes */
  clientState?: { valuesMax: number; treeBytesMax: number };
}

/** The limits a welcome carries for a plan of this shape. */
export function limitsForPlan(shape: PlanShape): ProtocolLimits {
  const { downFieldDims, upFieldDims, clientsPerWorker } = shape;
  if (!Number.isSafeInteger(clientsPerWorker) || clientsPerWorker < 1) {
    throw new RangeError(`clientsPerWorker must be a positive integer, got ${clientsPerWorker}`);
  }
  let maxFieldsPerMessage = 1;
  let maxVectorDim = 1;
  for (const fieldDims of [downFieldDims, upFieldDims]) {
    for (const fields of Object.values(fieldDims)) {
      const dims = Object.values(fields);
      maxFieldsPerMessage = Math.max(maxFieldsPerMessage, dims.length);
      for (const dim of dims) maxVectorDim = Math.max(maxVectorDim, dim);
    }
  }
  const state = shape.clientState;
  const stateFrameBytes =
    state === undefined ? 0 : MESSAGE_ENVELOPE_BYTES + 8 * state.valuesMax + state.treeBytesMax;
  return {
    ...HANDSHAKE_LIMITS,
    maxFrameBytes: Math.max(
      frameLimitBytesFor(downFieldDims),
      frameLimitBytesFor(upFieldDims),
      stateFrameBytes,
    ),
    maxFieldsPerMessage,
    maxClientsPerWorker: clientsPerWorker,
    maxVectorDim,
  };
}
