// Round frames from pre-encoded pieces (layout: round-frame-layout.ts). A MessagePack array is
// its header followed by its elements' encodings one after another, so a frame is assembled by
// concatenation: the coordinator encodes the part of a downs frame that every worker's frame of
// an exchange shares (the header elements and the common section, which holds the broadcast)
// once, and each worker's frame is that piece, the worker's entries and an array header. The
// length of each entry's piece is what the byte ledger counts as that client's own.

import type { CompressedVector } from '../compress/compressed-vector.js';
import { deltaVarintByteLength } from '../compress/index-coding.js';
import { arrayHeaderBytes, concatArray, encodedLength, encodeValue } from './codec.js';
import type { FieldDims } from './field-dims.js';
import type { DownEntry, DownsFrame, UpEntry, UpsFrame, WireFields } from './messages.js';
import {
  DOWNS_HEADER_ELEMENTS,
  ROUND_FRAME_KINDS,
  ROUND_FRAME_LAYOUT,
  UPS_HEADER_ELEMENTS,
  exchangeSlots,
  fieldSlots,
} from './round-frame-layout.js';
import type { WireVector } from './wire-vector.js';

function vectorElement(wv: WireVector): unknown[] {
  return [wv.dim, wv.width, wv.count, wv.indices, wv.values];
}

// The sizes below follow the encoders above piece by piece, without writing a vector's bytes:
// an array is its header and its elements one after another, nil is one byte, and a bin of n
// bytes has a 2-, 3- or 5-byte header (MessagePack specification, "bin 8/16/32"). The small
// numbers are encoded for real, so their forms are the codec's own.

const NIL_BYTES = 1;

/** Bytes of a MessagePack bin of `length` bytes. */
function binBytes(length: number): number {
  return length + (length <= 0xff ? 2 : length <= 0xffff ? 3 : 5);
}

/** Bytes the wire form of `cv` (toWire) takes as a frame's vector element. */
export function vectorElementBytes(cv: CompressedVector): number {
  const width = cv.values instanceof Float32Array ? 4 : 8;
  const count = cv.values.length;
  const scalars = encodedLength([cv.dim, width, count, null, null]) - 2 * NIL_BYTES;
  const indices = cv.indices === null ? NIL_BYTES : binBytes(deltaVarintByteLength(cv.indices));
  return scalars + indices + binBytes(count * width);
}

/** Bytes of an entry's field array: one slot per name, nil where `elementBytes` has none. */
function fieldArrayBytes(slots: readonly string[], elementBytes: (name: string) => number | null) {
  let bytes = arrayHeaderBytes(slots.length).byteLength;
  for (const name of slots) bytes += elementBytes(name) ?? NIL_BYTES;
  return bytes;
}

/** What every worker's downs frame of one exchange shares, encoded once. */
export interface DownsPrefix {
  /** the header elements and the common section, encoded */
  bytes: Uint8Array;
  /** the exchange's field names in slot order */
  slots: readonly string[];
  /** the fields the common section holds */
  common: ReadonlySet<string>;
}

/**
 * Encodes the shared part of an exchange's downs frames. `fieldNames` are every field of the
 * exchange (any order); `common` holds those every entry receives alike.
 */
export function encodeDownsPrefix(
  round: number,
  exchangeIndex: number,
  deadlineSeconds: number | null,
  fieldNames: readonly string[],
  common: WireFields,
): DownsPrefix {
  const slots = fieldSlots(fieldNames);
  const commonSlots = slots.map((name) =>
    Object.hasOwn(common, name) ? vectorElement(common[name]) : null,
  );
  const header = [
    ROUND_FRAME_KINDS.downs,
    ROUND_FRAME_LAYOUT,
    round,
    exchangeIndex,
    deadlineSeconds,
    commonSlots,
  ];
  return {
    bytes: concatPieces(header.map(encodeValue)),
    slots,
    common: new Set(Object.keys(common)),
  };
}

/** One client's entry of a downs frame: its own fields (every field not in the common section). */
export function encodeDownEntry(entry: DownEntry, prefix: DownsPrefix): Uint8Array {
  const fields = prefix.slots.map((name) => {
    if (prefix.common.has(name)) return null;
    const wv = entry.fields[name];
    if (wv === undefined)
      throw new RangeError(`down entry of client ${entry.clientId}: no "${name}"`);
    return vectorElement(wv);
  });
  return encodeValue([entry.clientId, entry.localSteps, entry.stepSize, fields]);
}

/** The length encodeDownEntry gives for this entry, its fields sized by vectorElementBytes. */
export function downEntryBytes(
  entry: Pick<DownEntry, 'clientId' | 'localSteps' | 'stepSize'>,
  fields: Readonly<Record<string, CompressedVector>>,
  prefix: DownsPrefix,
): number {
  const scalars = encodedLength([entry.clientId, entry.localSteps, entry.stepSize, null]);
  return (
    scalars -
    NIL_BYTES +
    fieldArrayBytes(prefix.slots, (name) => {
      if (prefix.common.has(name)) return null;
      const cv = fields[name];
      if (cv === undefined)
        throw new RangeError(`down entry of client ${entry.clientId}: no "${name}"`);
      return vectorElementBytes(cv);
    })
  );
}

/** The length assembleDownsFrame gives for the prefix and entries of these lengths. */
export function downsFrameBytes(prefix: DownsPrefix, entryBytes: readonly number[]): number {
  const header = arrayHeaderBytes(DOWNS_HEADER_ELEMENTS + entryBytes.length).byteLength;
  return entryBytes.reduce((sum, n) => sum + n, header + prefix.bytes.byteLength);
}

/** A worker's downs frame: the shared prefix and its entries (ascending client id). */
export function assembleDownsFrame(
  prefix: DownsPrefix,
  entries: readonly Uint8Array[],
): Uint8Array {
  return concatArray(DOWNS_HEADER_ELEMENTS + entries.length, [prefix.bytes, ...entries]);
}

/** The length of this entry in writeUpsFrame, its fields sized by vectorElementBytes. */
export function upEntryBytes(
  entry: Omit<UpEntry, 'fields' | 'updateNotFinite'>,
  fields: Readonly<Record<string, CompressedVector>>,
): number {
  const scalars = encodedLength([
    entry.clientId,
    entry.localSteps,
    entry.computeSeconds,
    entry.waitSeconds,
    entry.transferSeconds,
    null,
  ]);
  return (
    scalars -
    NIL_BYTES +
    fieldArrayBytes(fieldSlots(Object.keys(fields)), (name) => vectorElementBytes(fields[name]))
  );
}

/** The length of writeUpsFrame's frame for entries of these lengths. */
export function upsFrameBytes(
  round: number,
  exchangeIndex: number,
  entryBytes: readonly number[],
): number {
  const header = [ROUND_FRAME_KINDS.ups, ROUND_FRAME_LAYOUT, round, exchangeIndex]
    .map(encodedLength)
    .reduce(
      (sum, n) => sum + n,
      arrayHeaderBytes(UPS_HEADER_ELEMENTS + entryBytes.length).byteLength,
    );
  return entryBytes.reduce((sum, n) => sum + n, header);
}

// An ups frame written in one pass into one buffer. A worker's ups frame holds every hosted
// client's update (4 MB for 500 clients at d = 1,000): encoding each entry on its own, copying it
// out of the codec and then into the frame moved each vector three times and left a buffer per
// client and per frame for the garbage collector. Here the small elements still go through the
// codec (their forms are its own), and each vector's bytes are copied once, from the wire
// vector into the frame, behind a bin header written as the MessagePack specification gives it
// ("bin 8/16/32": marker, then the length big-endian in 1, 2 or 4 bytes). The bytes are the
// codec's own encoding of the frame as one positional array (tested).

const BIN8 = 0xc4;
const BIN16 = 0xc5;
const BIN32 = 0xc6;
const NIL = 0xc0;

/** Pieces of a frame in order, written into one buffer at the end. */
class FramePieces {
  private readonly pieces: Uint8Array[] = [];
  private length = 0;

  add(bytes: Uint8Array): void {
    this.pieces.push(bytes);
    this.length += bytes.byteLength;
  }

  /** An encoded array with its last `dropped` elements (nils) left off: the rest follow. */
  addOpenArray(elements: readonly unknown[], dropped: number): void {
    const bytes = encodeValue(elements);
    this.add(bytes.subarray(0, bytes.byteLength - dropped * NIL_BYTES));
  }

  addNil(): void {
    this.add(Uint8Array.of(NIL));
  }

  addBin(bytes: Uint8Array): void {
    const n = bytes.byteLength;
    if (n <= 0xff) this.add(Uint8Array.of(BIN8, n));
    else if (n <= 0xffff) this.add(Uint8Array.of(BIN16, n >> 8, n & 0xff));
    else this.add(Uint8Array.of(BIN32, n >>> 24, (n >>> 16) & 0xff, (n >>> 8) & 0xff, n & 0xff));
    this.add(bytes);
  }

  /**
   * The frame: a plain Uint8Array (not a Buffer), which a WebSocket client may mask in place
   * rather than copy, in memory from `take` (of the frame's length; its bytes need not be
   * zeroed, every one being written here).
   */
  write(take: (length: number) => Uint8Array): Uint8Array {
    const out = take(this.length);
    let offset = 0;
    for (const piece of this.pieces) {
      out.set(piece, offset);
      offset += piece.byteLength;
    }
    return out;
  }
}

/** A fresh buffer of the frame's length, not zeroed. */
function freshFrameBuffer(length: number): Uint8Array {
  return new Uint8Array(Buffer.allocUnsafeSlow(length).buffer, 0, length);
}

/**
 * A worker's ups frame from its entries (ascending client id), in one buffer: a fresh one, or
 * one `take` gives (a pool of the sender's, client/frame-buffers.ts).
 */
export function writeUpsFrame(
  round: number,
  exchangeIndex: number,
  entries: readonly UpEntry[],
  take: (length: number) => Uint8Array = freshFrameBuffer,
): Uint8Array {
  const pieces = new FramePieces();
  pieces.add(arrayHeaderBytes(UPS_HEADER_ELEMENTS + entries.length));
  for (const value of [ROUND_FRAME_KINDS.ups, ROUND_FRAME_LAYOUT, round, exchangeIndex])
    pieces.add(encodeValue(value));
  for (const entry of entries) {
    const { clientId, localSteps, computeSeconds, waitSeconds, transferSeconds } = entry;
    pieces.addOpenArray(
      [clientId, localSteps, computeSeconds, waitSeconds, transferSeconds, null],
      1,
    );
    if (entry.updateNotFinite === true) {
      pieces.addNil();
      continue;
    }
    const slots = fieldSlots(Object.keys(entry.fields));
    pieces.add(arrayHeaderBytes(slots.length));
    for (const name of slots) {
      const wv = entry.fields[name];
      pieces.addOpenArray([wv.dim, wv.width, wv.count, null, null], 2);
      if (wv.indices === null) pieces.addNil();
      else pieces.addBin(wv.indices);
      pieces.addBin(wv.values);
    }
  }
  return pieces.write(take);
}

/**
 * A whole round frame in one call, for a sender with no pieces to reuse (a worker's tools, tests):
 * `fieldDims` is the plan's for the frame's direction, in the method's exchange order.
 */
export function encodeRoundFrame(frame: DownsFrame | UpsFrame, fieldDims: FieldDims): Uint8Array {
  const exchangeIndex = exchangeSlots(fieldDims).indexOf(frame.exchange);
  if (exchangeIndex < 0) throw new RangeError(`"${frame.exchange}" is not an exchange of the plan`);
  if (frame.type === 'ups') return writeUpsFrame(frame.round, exchangeIndex, frame.entries);
  const prefix = encodeDownsPrefix(
    frame.round,
    exchangeIndex,
    frame.deadlineSeconds,
    Object.keys(fieldDims[frame.exchange]),
    frame.common,
  );
  return assembleDownsFrame(
    prefix,
    frame.entries.map((entry) => encodeDownEntry(entry, prefix)),
  );
}

function concatPieces(pieces: readonly Uint8Array[]): Uint8Array {
  let length = 0;
  for (const piece of pieces) length += piece.byteLength;
  const out = new Uint8Array(length);
  let offset = 0;
  for (const piece of pieces) {
    out.set(piece, offset);
    offset += piece.byteLength;
  }
  return out;
}
