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
 * (a diverging client reports E_NOT_FINITE instead of sending NaN). On a little-endian host the
 * wire values are a view of the vector's own bytes, not a copy: a message owns its vectors
 * (compress and the replicas make them fresh), and the sender encodes them into a frame before
 * anything could change them.
 */
export function toWire(cv: CompressedVector, path = 'vector'): WireVector {
  try {
    validateCompressedVector(cv);
  } catch (error) {
    throw protocolErrorOf(error, path);
  }
  const width = widthOf(cv.values);
  const count = cv.values.length;
  let values: Uint8Array;
  if (HOST_LITTLE_ENDIAN) {
    values = new Uint8Array(cv.values.buffer, cv.values.byteOffset, count * width);
  } else {
    values = new Uint8Array(count * width);
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

/**
 * Where decoded values go: fresh arrays, or views into one block that a whole frame's vectors
 * share (see ValueBlock).
 */
export interface ValueStore {
  take(width: ValueWidthBytes, count: number): Float64Array | Float32Array;
}

const FRESH_VALUES: ValueStore = {
  take: (width, count) => (width === 8 ? new Float64Array(count) : new Float32Array(count)),
};

/**
 * One buffer for the values of every vector of a frame, each an aligned view of its own: one
 * allocation per frame instead of one per vector (a frame of 1,000 ups at d = 1,000 otherwise
 * makes 1,000 buffers a round for the garbage collector). The views keep the whole block alive,
 * so a receiver uses it only for vectors that live as long as the frame's use (the
 * coordinator's ups, aggregated in the round); a vector a client keeps gets a fresh array.
 * Sized by the value bytes the frame holds (bounded by the frame itself, whatever the counts it
 * claims: a vector whose count and width disagree with its bytes fails its check).
 */
export class ValueBlock implements ValueStore {
  private readonly buffer: ArrayBuffer;
  private used = 0;

  constructor(valueBytes: number) {
    this.buffer = new ArrayBuffer(valueBytes);
  }

  /** Bytes a block needs for these wire vectors' values, each start aligned to 8. */
  static bytesFor(vectors: Iterable<WireVector>): number {
    let bytes = 0;
    for (const wv of vectors) bytes += Math.ceil(wv.values.byteLength / 8) * 8;
    return bytes;
  }

  take(width: ValueWidthBytes, count: number): Float64Array | Float32Array {
    const at = this.used;
    this.used += Math.ceil((width * count) / 8) * 8;
    if (this.used > this.buffer.byteLength)
      throw new RangeError(`value block of ${this.buffer.byteLength} bytes overrun`);
    return width === 8
      ? new Float64Array(this.buffer, at, count)
      : new Float32Array(this.buffer, at, count);
  }
}

/**
 * Reads the little-endian values into `out`, checking each is finite: one copy of the bytes and
 * one pass over the numbers.
 */
function readValues(wv: WireVector, path: string, out: Float64Array | Float32Array): void {
  if (HOST_LITTLE_ENDIAN) {
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
    out[i] = value;
  }
}

/**
 * What a check decoded, kept for the fromWire that follows it: a frame's vectors are checked
 * (all of them, before any is used) and then decoded, and doing the work once halves the
 * copies and passes over a frame's numbers. Weak: a checked vector never decoded costs nothing.
 */
const decodedOnCheck = new WeakMap<WireVector, CompressedVector>();

function decode(wv: WireVector, path: string, store: ValueStore): CompressedVector {
  checkCounts(wv, path);
  const indices = decodeIndices(wv, path);
  const values = store.take(wv.width, wv.count);
  readValues(wv, path, values);
  return { dim: wv.dim, indices, values };
}

/**
 * Checks a wire vector from a peer: width, dimension, count against the index stream and the
 * value bytes, indices strictly increasing and below dim, every value finite. Throws
 * ProtocolError (E_TYPE, E_DIMENSION, E_NOT_FINITE). The values it decodes on the way (into
 * `store`: fresh arrays unless a frame's block is given) are what the next fromWire of the
 * same vector returns.
 */
export function checkWireVector(
  wv: WireVector,
  path = 'vector',
  store: ValueStore = FRESH_VALUES,
): void {
  decodedOnCheck.set(wv, decode(wv, path, store));
}

/**
 * A wire vector -> a compressed vector with aligned typed arrays that share no memory with the
 * frame: fresh, or in the frame's value block when checkWireVector was given one. Checks
 * everything checkWireVector checks.
 */
export function fromWire(wv: WireVector, path = 'vector'): CompressedVector {
  const checked = decodedOnCheck.get(wv);
  if (checked !== undefined) {
    // Taken once: a second decode of the same vector (a common field, one per client) is fresh.
    decodedOnCheck.delete(wv);
    return checked;
  }
  return decode(wv, path, FRESH_VALUES);
}
