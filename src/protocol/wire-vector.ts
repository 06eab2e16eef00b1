// The form a compressed vector takes inside a message: the dimension, the index stream (delta
// varint, as src/compress/index-coding.ts codes it; null for the dense form), the number of
// values carried, and the values as raw little-endian IEEE 754 bytes. Raw bytes travel as one
// MessagePack bin each, so a vector costs its payload plus a few header bytes, never a
// per-number tag.
//
// Values are little-endian on the wire. On a little-endian host (every platform Node runs on
// today) they travel as plain byte copies, the in-memory form being the wire form; a bin decoded
// by msgpackr is a view into the frame at whatever byte offset it landed on, and a Float64Array
// cannot sit on an offset that is not a multiple of 8, so the bytes are copied into a fresh,
// aligned array before any value is read. A big-endian host goes through a DataView with the
// byte order explicit. Both give the same numbers bit for bit: no value is ever computed.

import { z } from 'zod';
import { CompressError } from '../compress/compress-error.js';
import { type CompressedVector, validateCompressedVector } from '../compress/compressed-vector.js';
import { decodeIndicesDeltaVarint, encodeIndicesDeltaVarint } from '../compress/index-coding.js';
import { ProtocolError } from './errors.js';

// Typed as the plain Uint8Array (any buffer): a decoded bin is a view into the frame's buffer.
const Uint8ArrayOfAnyBuffer: new (length: number) => Uint8Array = Uint8Array;

/** Raw bytes in a message (a MessagePack bin). */
export const bytesShape = z.instanceof(Uint8ArrayOfAnyBuffer);

export const wireVectorShape = z.strictObject({
  /** dimension d of the vector this stands for */
  dim: z.number(),
  /** delta varint coded, strictly increasing indices; null: dense (one value per entry) */
  indices: bytesShape.nullable(),
  /** values carried: d when dense, k when sparse */
  count: z.number(),
  /** `count` little-endian IEEE 754 values of `width` bytes each */
  values: bytesShape,
  /** bytes per value: f32 or f64 */
  width: z.union([z.literal(4), z.literal(8)]),
});

/** Checked in full by checkWireVector; the shape only says what each member is. */
export type WireVector = z.infer<typeof wireVectorShape>;

/** Bytes per value on the wire: f32 or f64. */
export type ValueWidthBytes = WireVector['width'];

/** Whether typed arrays on this host hold numbers in the wire's byte order (IEEE 754 binary64 of 1.0 ends in 0x3f in memory when little-endian). */
const HOST_LITTLE_ENDIAN = new Uint8Array(Float64Array.of(1).buffer)[7] === 0x3f;

function widthOf(values: Float64Array | Float32Array): ValueWidthBytes {
  return values instanceof Float32Array ? 4 : 8;
}

/** CompressError codes are finer than the protocol's: every index fault is a dimension fault on the wire. */
function protocolErrorOf(error: unknown, path: string): unknown {
  if (!(error instanceof CompressError)) return error;
  switch (error.code) {
    case 'E_COMPRESS_NOT_FINITE':
      return new ProtocolError('E_NOT_FINITE', `${path}: ${error.message}`);
    case 'E_COMPRESS_DIMENSION':
    case 'E_COMPRESS_INDEX_ORDER':
    case 'E_COMPRESS_INDEX_RANGE':
    case 'E_COMPRESS_VARINT':
      return new ProtocolError('E_DIMENSION', `${path}: ${error.message}`);
    default:
      return error;
  }
}

/**
 * A compressed vector -> its wire form. Throws ProtocolError E_DIMENSION or E_NOT_FINITE when
 * the vector breaks the form's invariants, so that a sender finds out before the receiver does
 * (a diverging client reports E_NOT_FINITE instead of sending NaN). The values are copied.
 */
export function toWire(cv: CompressedVector, path = 'vector'): WireVector {
  try {
    validateCompressedVector(cv);
  } catch (error) {
    throw protocolErrorOf(error, path);
  }
  const width = widthOf(cv.values);
  const count = cv.values.length;
  const values = new Uint8Array(count * width);
  if (HOST_LITTLE_ENDIAN) {
    values.set(new Uint8Array(cv.values.buffer, cv.values.byteOffset, count * width));
  } else {
    const view = new DataView(values.buffer);
    if (width === 8) {
      for (let i = 0; i < count; i++) view.setFloat64(i * 8, cv.values[i], true);
    } else {
      for (let i = 0; i < count; i++) view.setFloat32(i * 4, cv.values[i], true);
    }
  }
  const indices = cv.indices === null ? null : encodeIndicesDeltaVarint(cv.indices);
  return { dim: cv.dim, indices, count, values, width };
}

function checkCounts(wv: WireVector, path: string): void {
  const { dim, count, width, indices, values } = wv;
  if (width !== 4 && width !== 8) {
    throw new ProtocolError('E_TYPE', `${path}.width: must be 4 or 8, got ${String(width)}`);
  }
  if (!Number.isSafeInteger(dim) || dim < 1) {
    throw new ProtocolError('E_DIMENSION', `${path}.dim: must be a positive integer, got ${dim}`);
  }
  if (!Number.isSafeInteger(count) || count < 0 || count > dim) {
    throw new ProtocolError(
      'E_DIMENSION',
      `${path}.count: must be an integer in [0, ${dim}], got ${count}`,
    );
  }
  if (indices === null && count !== dim) {
    throw new ProtocolError(
      'E_DIMENSION',
      `${path}.count: the dense form carries all ${dim} entries, got ${count}`,
    );
  }
  if (values.byteLength !== count * width) {
    throw new ProtocolError(
      'E_DIMENSION',
      `${path}.values: ${count} values of ${width} bytes need ${count * width} bytes, got ${values.byteLength}`,
    );
  }
}

function decodeIndices(wv: WireVector, path: string): Uint32Array | null {
  if (wv.indices === null) return null;
  let indices: Uint32Array;
  try {
    indices = decodeIndicesDeltaVarint(wv.indices, wv.count);
  } catch (error) {
    throw protocolErrorOf(error, `${path}.indices`);
  }
  if (indices.length > 0 && indices[indices.length - 1] >= wv.dim) {
    throw new ProtocolError(
      'E_DIMENSION',
      `${path}.indices: index ${indices[indices.length - 1]} is not below the dimension ${wv.dim}`,
    );
  }
  return indices;
}

function assertAllFinite(values: Float64Array | Float32Array, path: string): void {
  for (let i = 0; i < values.length; i++) {
    if (!Number.isFinite(values[i])) {
      throw new ProtocolError('E_NOT_FINITE', `${path}.values: value ${i} is ${values[i]}`);
    }
  }
}

function typedOfWidth(width: ValueWidthBytes, count: number): Float64Array | Float32Array {
  return width === 8 ? new Float64Array(count) : new Float32Array(count);
}

/**
 * Where validation copies values that sit unaligned in their frame: one buffer reused from one
 * check to the next (a check allocates nothing per vector), grown to the largest vector seen,
 * which is never more than bytes the peer already sent.
 */
let alignedScratch = new ArrayBuffer(0);

/** The values as a typed array: a view where the bytes sit aligned, else a copy in the scratch. */
function alignedValues(wv: WireVector): Float64Array | Float32Array {
  const { values, width, count } = wv;
  let buffer = values.buffer;
  let byteOffset = values.byteOffset;
  if (byteOffset % width !== 0) {
    if (alignedScratch.byteLength < values.byteLength)
      alignedScratch = new ArrayBuffer(values.byteLength);
    new Uint8Array(alignedScratch, 0, values.byteLength).set(values);
    buffer = alignedScratch;
    byteOffset = 0;
  }
  return width === 8
    ? new Float64Array(buffer, byteOffset, count)
    : new Float32Array(buffer, byteOffset, count);
}

/**
 * Reads the little-endian values, checking each is finite, into `out` when given (validation
 * alone passes null and copies the values only where they sit unaligned in the frame).
 */
function readValues(wv: WireVector, path: string, out: Float64Array | Float32Array | null): void {
  if (HOST_LITTLE_ENDIAN) {
    if (out === null) {
      assertAllFinite(alignedValues(wv), path);
      return;
    }
    new Uint8Array(out.buffer, out.byteOffset, out.byteLength).set(wv.values);
    assertAllFinite(out, path);
    return;
  }
  const view = new DataView(wv.values.buffer, wv.values.byteOffset, wv.values.byteLength);
  const wide = wv.width === 8;
  for (let i = 0; i < wv.count; i++) {
    const value = wide ? view.getFloat64(i * 8, true) : view.getFloat32(i * 4, true);
    if (!Number.isFinite(value)) {
      throw new ProtocolError('E_NOT_FINITE', `${path}.values: value ${i} is ${value}`);
    }
    if (out !== null) out[i] = value;
  }
}

/**
 * Checks a wire vector from a peer without building its value array: width, dimension, count
 * against the index stream and the value bytes, indices strictly increasing and below dim,
 * every value finite. Throws ProtocolError (E_TYPE, E_DIMENSION, E_NOT_FINITE).
 */
export function checkWireVector(wv: WireVector, path = 'vector'): void {
  checkCounts(wv, path);
  decodeIndices(wv, path);
  readValues(wv, path, null);
}

/**
 * A wire vector -> a compressed vector with fresh, aligned typed arrays (they share no memory
 * with the frame). Checks everything checkWireVector checks.
 */
export function fromWire(wv: WireVector, path = 'vector'): CompressedVector {
  checkCounts(wv, path);
  const indices = decodeIndices(wv, path);
  const values = typedOfWidth(wv.width, wv.count);
  readValues(wv, path, values);
  return { dim: wv.dim, indices, values };
}
