// Messages <-> bytes. MessagePack through msgpackr, restricted to the core types (nil, bool,
// int, float, str, bin, array, map) so that every frame is self-describing and any MessagePack
// decoder can read it: no record structures, no extensions, no state carried from one frame to
// the next. Vectors are bin (see wire-vector.ts), never arrays of floats.
//
// decodeMessage returns plain data to validate (validate.ts), nothing more: a decoded value of
// any other kind (a Date, a Map, an undefined) means the peer does not speak this dialect, and
// is refused as E_DECODE.

import { FLOAT32_OPTIONS, Packr, Unpackr, type Options } from 'msgpackr';
import { ProtocolError } from './errors.js';
import type { Message } from './messages.js';

const CODEC_OPTIONS: Options = {
  useRecords: false,
  structuredClone: false,
  moreTypes: false,
  bundleStrings: false,
  sequential: false,
  mapsAsObjects: true,
  variableMapSize: true,
  useFloat32: FLOAT32_OPTIONS.NEVER,
  useToJSON: false,
  copyBuffers: false,
  // Other encoders send large integers (a millisecond clock) as int64/uint64. As numbers, those
  // up to 2^53 arrive exact; beyond, integer fields fail validation as unsafe integers.
  int64AsType: 'number',
};

/** Deepest nesting of arrays and maps accepted; messages need 4, a plan a handful more. */
export const NESTING_DEPTH_MAX = 32;

const packr = new Packr(CODEC_OPTIONS);
const unpackr = new Unpackr(CODEC_OPTIONS);

/**
 * A message -> one MessagePack value. The result is a view into the encoder's buffer that stays
 * valid (later calls write after it); send or copy it, do not write into it.
 */
export function encodeMessage(message: Message): Uint8Array {
  return packr.pack(message);
}

function describe(value: unknown): string {
  if (value === null || typeof value !== 'object') return typeof value;
  return Object.getPrototypeOf(value)?.constructor?.name ?? 'object without prototype';
}

function assertPlainData(value: unknown, path: string, depth: number): void {
  switch (typeof value) {
    case 'string':
    case 'number':
    case 'boolean':
      return;
    case 'object':
      break;
    default:
      throw new ProtocolError(
        'E_DECODE',
        `${path}: ${describe(value)} is not a MessagePack core type`,
      );
  }
  if (value === null || value instanceof Uint8Array) return;
  if (depth >= NESTING_DEPTH_MAX) {
    throw new ProtocolError('E_DECODE', `${path}: nested deeper than ${NESTING_DEPTH_MAX} levels`);
  }
  if (Array.isArray(value)) {
    for (let i = 0; i < value.length; i++) assertPlainData(value[i], `${path}[${i}]`, depth + 1);
    return;
  }
  if (Object.getPrototypeOf(value) !== Object.prototype) {
    throw new ProtocolError(
      'E_DECODE',
      `${path}: ${describe(value)} is not a MessagePack core type`,
    );
  }
  for (const [key, entry] of Object.entries(value))
    assertPlainData(entry, `${path}.${key}`, depth + 1);
}

/**
 * One frame -> plain data (objects, arrays, strings, finite or not numbers, booleans, null,
 * Uint8Array). Throws ProtocolError E_SIZE when the frame exceeds maxFrameBytes (checked
 * before any decoding) and E_DECODE when it is not exactly one value of the core types.
 */
export function decodeMessage(bytes: Uint8Array, maxFrameBytes: number): unknown {
  if (bytes.byteLength > maxFrameBytes) {
    throw new ProtocolError(
      'E_SIZE',
      `frame of ${bytes.byteLength} bytes exceeds the limit of ${maxFrameBytes}`,
    );
  }
  if (bytes.byteLength === 0) throw new ProtocolError('E_DECODE', 'empty frame');
  let value: unknown;
  try {
    value = unpackr.unpack(bytes);
  } catch (error) {
    // msgpackr throws on truncation, trailing bytes and unknown tokens, and the engine throws
    // RangeError when nesting exhausts the stack: all mean the frame is not one valid value.
    throw new ProtocolError('E_DECODE', `not a MessagePack value: ${(error as Error).message}`);
  }
  assertPlainData(value, 'message', 0);
  return value;
}
