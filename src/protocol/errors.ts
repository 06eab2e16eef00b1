// Errors raised while reading a message from a peer. The code is stable, so that the receiver
// can reply with it in an `error` message, count it in a metric labelled by reason, and a test
// can assert it; the message names the offending field path for the human reading the log.

import { CodedError } from '../base/coded-error.js';

export const PROTOCOL_ERROR_CODES = [
  /** The frame is not one MessagePack value of the core types this protocol uses. */
  'E_DECODE',
  /** Unknown message type, a type not expected now, or a field of the wrong shape. */
  'E_TYPE',
  /** The peer speaks another protocol version. */
  'E_VERSION',
  /** A down or up for a round or exchange other than the one in progress. */
  'E_ROUND',
  /** A client id that this worker does not host. */
  'E_CLIENT',
  /** A vector whose dimension differs from the plan's, or whose indices or count are inconsistent. */
  'E_DIMENSION',
  /** NaN or an infinity where a finite number is required. */
  'E_NOT_FINITE',
  /** A frame, a string, a list or a field set beyond its limit. */
  'E_SIZE',
  /** The proof of the shared key does not answer the challenge. */
  'E_AUTH',
  /** A message out of the conversation's order: a connection's first message must be a hello. */
  'E_ORDER',
  /** The worker's copy of the plan's data file is missing or differs from the coordinator's. */
  'E_DATA_COPY',
] as const;

export type ProtocolErrorCode = (typeof PROTOCOL_ERROR_CODES)[number];

export class ProtocolError extends CodedError<ProtocolErrorCode> {}

export function isProtocolErrorCode(value: unknown): value is ProtocolErrorCode {
  return typeof value === 'string' && (PROTOCOL_ERROR_CODES as readonly string[]).includes(value);
}
