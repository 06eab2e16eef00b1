// Messages <-> bytes. MessagePack through msgpackr, restricted to the core types (nil, bool,
// int, float, str, bin, array, map) so that every frame is self-describing and any MessagePack
// decoder can read it: no record structures, no extensions, no state carried from one frame to
// the next. Vectors are bin (see wire-vector.ts), never arrays of floats.
//
// decodeMessage returns plain data to validate (validate.ts), nothing more: a decoded value of
// any other kind (a Date, a Map, an undefined) means the peer does not speak this dialect, and
// is refused as E_DECODE. A frame that is an array (a round frame, round-frame-layout.ts) comes
// back as its elements with the byte length of each, so that a receiver can count an entry's
// bytes as they were on the wire.

import { FLOAT32_OPTIONS, Packr, Unpackr, type Options } from 'msgpackr';
import { ProtocolError } from './errors.js';
import type { ControlMessage } from './messages.js';

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

/**
 * A frame that is one MessagePack array: its elements, and how many bytes each took in the
 * frame (the array's own header, `headerBytes`, apart).
 */
export class FrameElements {
  readonly elements: unknown[];
  readonly elementBytes: number[];
  readonly headerBytes: number;

  constructor(elements: unknown[], elementBytes: number[], headerBytes: number) {
    this.elements = elements;
    this.elementBytes = elementBytes;
    this.headerBytes = headerBytes;
  }
}

// Array headers, from the MessagePack spec ("formats", array format family): fixarray 1001xxxx
// holds up to 15 elements, array 16 (0xdc) and array 32 (0xdd) give the count in 2 or 4
// big-endian bytes after the marker.
const FIXARRAY_MIN = 0x90;
const FIXARRAY_MAX = 0x9f;
const ARRAY16 = 0xdc;
const ARRAY32 = 0xdd;

/** The element count and header length of an array at the start of `bytes`, or null if none. */
function arrayHeader(bytes: Uint8Array): { count: number; headerBytes: number } | null {
  const marker = bytes[0];
  if (marker >= FIXARRAY_MIN && marker <= FIXARRAY_MAX)
    return { count: marker - FIXARRAY_MIN, headerBytes: 1 };
  const view = new DataView(bytes.buffer, bytes.byteOffset, bytes.byteLength);
  if (marker === ARRAY16 && bytes.byteLength >= 3)
    return { count: view.getUint16(1), headerBytes: 3 };
  if (marker === ARRAY32 && bytes.byteLength >= 5)
    return { count: view.getUint32(1), headerBytes: 5 };
  if (marker === ARRAY16 || marker === ARRAY32)
    throw new ProtocolError('E_DECODE', 'not a MessagePack value: the array header is cut short');
  return null;
}

/** The header of an array of `count` elements (the smallest form, as any encoder writes it). */
export function arrayHeaderBytes(count: number): Uint8Array {
  if (count <= FIXARRAY_MAX - FIXARRAY_MIN) return Uint8Array.of(FIXARRAY_MIN + count);
  if (count <= 0xffff) return Uint8Array.of(ARRAY16, count >> 8, count & 0xff);
  const out = new Uint8Array(5);
  out[0] = ARRAY32;
  new DataView(out.buffer).setUint32(1, count);
  return out;
}

/** Deepest nesting of arrays and maps accepted; messages need 4, a plan a handful more. */
export const NESTING_DEPTH_MAX = 32;

const packr = new Packr(CODEC_OPTIONS);
const unpackr = new Unpackr(CODEC_OPTIONS);

/**
 * A message -> one MessagePack value. The result is a view into the encoder's buffer that stays
 * valid (later calls write after it); send or copy it, do not write into it.
 */
export function encodeMessage(message: ControlMessage): Uint8Array {
  return packr.pack(message);
}

/**
 * Any plain value -> its MessagePack bytes, copied out of the encoder's buffer (a piece of a
 * round frame, kept and reused while later values are encoded).
 */
export function encodeValue(value: unknown): Uint8Array {
  return packr.pack(value).slice();
}

/** The length of a value's MessagePack encoding, nothing kept (the size functions' small numbers). */
export function encodedLength(value: unknown): number {
  return packr.pack(value).byteLength;
}

/**
 * An array of `count` elements from the encoded elements, in order: the array header, then the
 * pieces as they are (round-frame-encode.ts). One copy, into a buffer of the frame's length.
 */
export function concatArray(count: number, pieces: readonly Uint8Array[]): Uint8Array {
  const header = arrayHeaderBytes(count);
  let length = header.byteLength;
  for (const piece of pieces) length += piece.byteLength;
  const out = new Uint8Array(length);
  out.set(header, 0);
  let offset = header.byteLength;
  for (const piece of pieces) {
    out.set(piece, offset);
    offset += piece.byteLength;
  }
  return out;
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
 * Uint8Array); a frame that is an array -> FrameElements. Throws ProtocolError E_SIZE when the
 * frame exceeds maxFrameBytes (checked before any decoding) and E_DECODE when it is not exactly
 * one value of the core types.
 */
export function decodeMessage(bytes: Uint8Array, maxFrameBytes: number): unknown {
  checkFrameSize(bytes, maxFrameBytes);
  const array = arrayHeader(bytes);
  if (array !== null) return decodeElements(bytes, array.count, array.headerBytes);
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

function decodeElements(bytes: Uint8Array, count: number, headerBytes: number): FrameElements {
  const elements: unknown[] = [];
  const elementBytes: number[] = [];
  if (bytes.byteLength > headerBytes) {
    try {
      unpackr.unpackMultiple(bytes.subarray(headerBytes), (value, start, end) => {
        elements.push(value);
        elementBytes.push(end! - start!);
        // Past the count the bytes are trailing garbage; stop reading them.
        return elements.length <= count;
      });
    } catch (error) {
      throw new ProtocolError('E_DECODE', `not a MessagePack value: ${(error as Error).message}`);
    }
  }
  if (elements.length !== count) {
    throw new ProtocolError(
      'E_DECODE',
      elements.length > count
        ? `not a MessagePack value: bytes trail the array of ${count} elements`
        : `not a MessagePack value: an array of ${count} elements holds ${elements.length}`,
    );
  }
  for (let i = 0; i < count; i++) assertPlainData(elements[i], `frame[${i}]`, 1);
  return new FrameElements(elements, elementBytes, headerBytes);
}

function checkFrameSize(bytes: Uint8Array, maxFrameBytes: number): void {
  if (bytes.byteLength > maxFrameBytes) {
    throw new ProtocolError(
      'E_SIZE',
      `frame of ${bytes.byteLength} bytes exceeds the limit of ${maxFrameBytes}`,
    );
  }
  if (bytes.byteLength === 0) throw new ProtocolError('E_DECODE', 'empty frame');
}
