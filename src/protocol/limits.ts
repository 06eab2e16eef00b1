// Every network input is bounded. Before the plan is known (the handshake) fixed limits apply;
// the welcome then carries limits derived from the plan: a frame limit just above the largest
// legal down or up, the field count and dimension of the method's vectors, the worker's share
// of clients. Both ends apply the same numbers.

import { z } from 'zod';
import type { FieldDims } from './field-dims.js';
import { PROTOCOL_ERROR_CODES } from './errors.js';
import { PROOF_BYTES, RESUME_TOKEN_BYTES } from './secret-lengths.js';

export const protocolLimitsSchema = z
  .object({
    /** largest MessagePack frame a receiver decodes (WebSocket framing not included) */
    maxFrameBytes: z.number().int().positive().max(Number.MAX_SAFE_INTEGER),
    /** most vectors of one client in one exchange, either way */
    maxFieldsPerMessage: z.number().int().positive(),
    /** most clients one worker hosts (welcome assignments, hello capacity), and so the most entries of a round frame */
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

// Worst cases below from the MessagePack spec, "formats": a number takes at most 9 bytes (a
// marker and 8), an array header at most 5 (array 32), a bin header at most 5 (bin 32).
/**
 * Worst-case bytes of a round frame around its entries and common section: the array header,
 * kind, layout, round, exchange index and deadline (about 40), with room to spare.
 */
const FRAME_ENVELOPE_BYTES = 1024;
/** Worst-case bytes of one entry around its vectors: the array header, six numbers, the slots' array header (51), with room. */
const ENTRY_ENVELOPE_BYTES = 128;
/** Worst-case bytes of one vector around its values and indices: the array header, three numbers, two bin headers (38), with room. */
const FIELD_ENVELOPE_BYTES = 64;
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
 * The largest legal round frame of one direction holding up to `entriesMax` entries (a worker's
 * clients): the envelope, then, for the exchange whose entry can be largest (every field at its
 * dimension, every value carried with an index, at 8 bytes), that entry `entriesMax` times plus
 * once more for a downs frame's common section; never below the size of a control message.
 */
export function roundFrameBytesMaxFor(fieldDims: FieldDims, entriesMax: number): number {
  assertFieldDims(fieldDims);
  if (!Number.isSafeInteger(entriesMax) || entriesMax < 1) {
    throw new RangeError(`entriesMax must be a positive integer, got ${entriesMax}`);
  }
  let entryBytesMax = 0;
  for (const fields of Object.values(fieldDims)) {
    let bytes = ENTRY_ENVELOPE_BYTES;
    for (const dim of Object.values(fields)) bytes += FIELD_ENVELOPE_BYTES + ENTRY_BYTES_MAX * dim;
    entryBytesMax = Math.max(entryBytesMax, bytes);
  }
  return Math.max(CONTROL_FRAME_BYTES, FRAME_ENVELOPE_BYTES + (entriesMax + 1) * entryBytesMax);
}

/** Worst-case bytes of everything in a state message but its tree and vectors: keys, numbers, headers. */
const STATE_ENVELOPE_BYTES = 1024;

/** The largest state message of a client state of this bound. */
export function stateFrameBytesMaxFor(state: { valuesMax: number; treeBytesMax: number }): number {
  return STATE_ENVELOPE_BYTES + 8 * state.valuesMax + state.treeBytesMax;
}

export interface PlanShape {
  /** vectors going down, per exchange */
  downFieldDims: FieldDims;
  /** vectors going up, per exchange */
  upFieldDims: FieldDims;
  /** clients the worker hosts: the most entries one of its round frames holds */
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
  const stateFrameBytes = state === undefined ? 0 : stateFrameBytesMaxFor(state);
  return {
    ...HANDSHAKE_LIMITS,
    maxFrameBytes: Math.max(
      roundFrameBytesMaxFor(downFieldDims, clientsPerWorker),
      roundFrameBytesMaxFor(upFieldDims, clientsPerWorker),
      stateFrameBytes,
    ),
    maxFieldsPerMessage,
    maxClientsPerWorker: clientsPerWorker,
    maxVectorDim,
  };
}

// The hello, bounded from its fields. A connection carries nothing else before its hello is
// accepted, so a frame larger than this is refused by its header alone (server/wire-meter.ts),
// before its payload is buffered or a byte of it is decoded. Sizes from the MessagePack spec,
// "formats": a map of at most 15 entries has a 1-byte header (fixmap); a key of at most 31
// bytes is a fixstr (1 byte + its bytes); a number takes at most 9 bytes (marker + 8, as int64,
// uint64 or float64); a string of up to 65,535 bytes a 3-byte header (str16); a binary of up to
// 255 bytes a 2-byte header (bin8). UTF-8 spends at most 3 bytes on a UTF-16 code unit (a
// surrogate pair, two units, takes 4).

/** The keys a hello may carry (messages.ts, HelloMessage). */
const HELLO_KEYS = ['type', 'protocolVersion', 'workerName', 'capacity', 'proof', 'resume'];
const FIXMAP_HEADER_BYTES = 1;
const NUMBER_BYTES_MAX = 9;
const STR16_HEADER_BYTES = 3;
const BIN8_HEADER_BYTES = 2;
const UTF8_BYTES_PER_UTF16_UNIT_MAX = 3;

/** Largest encoding of a legal hello under `limits` (bytes of the MessagePack frame). */
export function helloFrameBytesMax(limits: ProtocolLimits = HANDSHAKE_LIMITS): number {
  let bytes = FIXMAP_HEADER_BYTES;
  for (const key of HELLO_KEYS) bytes += 1 + key.length;
  bytes += 1 + 'hello'.length;
  bytes += NUMBER_BYTES_MAX; // protocolVersion
  bytes += STR16_HEADER_BYTES + UTF8_BYTES_PER_UTF16_UNIT_MAX * limits.maxWorkerNameLength;
  bytes += NUMBER_BYTES_MAX; // capacity
  bytes += BIN8_HEADER_BYTES + PROOF_BYTES;
  bytes += BIN8_HEADER_BYTES + RESUME_TOKEN_BYTES;
  return bytes;
}

/**
 * Largest encoding of a legal heartbeat or error under `limits`: the messages a worker sends
 * unasked (an up answers a down). Bounded as the hello is, above.
 */
export function controlFrameBytesMax(limits: ProtocolLimits): number {
  const heartbeatBytes =
    FIXMAP_HEADER_BYTES +
    (1 + 'type'.length) +
    (1 + 'heartbeat'.length) +
    (1 + 'sentAtMs'.length) +
    NUMBER_BYTES_MAX;
  const longestCode = Math.max(...PROTOCOL_ERROR_CODES.map((code) => code.length));
  const errorBytes =
    FIXMAP_HEADER_BYTES +
    (1 + 'type'.length) +
    (1 + 'error'.length) +
    (1 + 'code'.length) +
    (1 + longestCode) +
    (1 + 'message'.length) +
    STR16_HEADER_BYTES +
    UTF8_BYTES_PER_UTF16_UNIT_MAX * limits.maxErrorMessageLength;
  return Math.max(heartbeatBytes, errorBytes);
}

/**
 * Limits on connections rather than on messages: what a peer may hold, send and make the
 * coordinator buffer. The coordinator applies them (server/); a worker that follows the
 * protocol never comes near any of them.
 */
export const CONNECTION_LIMITS = {
  /**
   * From the TCP connection's accept to an accepted hello: the TLS handshake, the HTTP upgrade
   * and the hello together. An honest worker needs a few round trips; a connection still short
   * of its hello after this is dropped.
   */
  handshakeDeadlineSeconds: 5,
  /** After a close frame, how long the peer has to answer it before the socket is destroyed. */
  closingDeadlineSeconds: 2,
  /**
   * Connections that have not passed their hello, at once. A connection past this evicts the
   * oldest unauthenticated one, so that idle connections can never keep a worker (or a resuming
   * one) out; authenticated workers are never counted.
   */
  unauthenticatedConnectionsMax: 64,
  /**
   * Messages a worker may send beyond one per entry of the downs frames it was sent (heartbeats, error reports):
   * a sustained rate and a burst. A worker sends a heartbeat every heartbeatIntervalSeconds.
   */
  unsolicitedMessagesPerSecond: 20,
  unsolicitedMessagesBurst: 100,
  /** Error replies to one connection: past the burst, at most this many a second; the rest are counted only. */
  errorRepliesPerSecond: 5,
  errorRepliesBurst: 20,
  /** Bad messages one connection may send (a burst, then a rate) before it is dropped. */
  badMessagesPerSecond: 5,
  badMessagesBurst: 100,
  /** The coordinator logs one line per kind of peer trouble per interval, with a count of the rest. */
  logIntervalSeconds: 10,
  /** ws's own bound on pings answered but not yet written (a peer that pings and never reads). */
  pendingPongsMax: 16,
} as const;

/**
 * Bytes the coordinator may have queued for one connection, unsent because the peer does not
 * read, before it drops the peer: the downs frames of two exchanges (one that the peer is still
 * reading, one just sent) at the frame limit, or the state of each of its clients that a resumed
 * run sends after the welcome (`stateFrameBytesMax` each), or before the welcome, the welcome
 * itself (HANDSHAKE_LIMITS.maxFrameBytes); and room for control messages.
 */
export function pendingBytesMaxFor(
  limits: ProtocolLimits,
  clientsPerWorker: number,
  stateFrameBytesMax = 0,
): number {
  if (!Number.isSafeInteger(clientsPerWorker) || clientsPerWorker < 0) {
    throw new RangeError(
      `clientsPerWorker must be a non-negative integer, got ${clientsPerWorker}`,
    );
  }
  const exchangesBytes = clientsPerWorker === 0 ? 0 : 2 * limits.maxFrameBytes;
  const statesBytes = clientsPerWorker * stateFrameBytesMax;
  return (
    Math.max(exchangesBytes, statesBytes, HANDSHAKE_LIMITS.maxFrameBytes) + CONTROL_FRAME_BYTES
  );
}
