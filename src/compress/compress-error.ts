// Errors raised by the compression layer. The code is stable so that a caller (the protocol
// validator, the coordinator, a test) can branch on it; the codes E_DIMENSION and E_NOT_FINITE
// mean the same here as in the protocol.

import { CodedError } from '../base/coded-error.js';

export type CompressErrorCode =
  /** A vector whose length does not match its channel, or a dimension below 1. */
  | 'E_COMPRESS_DIMENSION'
  /** A NaN or an infinity in a vector, or a value beyond the range of its wire width. */
  | 'E_COMPRESS_NOT_FINITE'
  /** Indices not strictly increasing (the sparse form needs them sorted and distinct). */
  | 'E_COMPRESS_INDEX_ORDER'
  /** An index at or beyond the dimension, or beyond uint32. */
  | 'E_COMPRESS_INDEX_RANGE'
  /** Index bytes that are not a canonical delta varint coding of exactly k indices. */
  | 'E_COMPRESS_VARINT'
  /** A compressor specification that cannot be honoured (no fraction or count for top-k). */
  | 'E_COMPRESS_SPEC'
  /** rand-k asked to compress without the seeded Rng it draws from. */
  | 'E_COMPRESS_RNG_REQUIRED';

export class CompressError extends CodedError<CompressErrorCode> {}
