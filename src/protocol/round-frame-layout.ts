// The bytes of the two round frames, downs and ups: MessagePack arrays read by position, so that
// no key name travels, and exchanges and fields go by their index in the plan (both ends derive
// the method's exchanges and each exchange's fields from the welcome's plan). The layout carries
// its own version: a receiver reads the kind and the version first, and refuses a layout it does
// not speak (E_VERSION) before reading anything else. Bump ROUND_FRAME_LAYOUT (and
// PROTOCOL_VERSION) on any change below.
//
//   downs   [1, layout, round, exchange index, deadline seconds | nil, common, entry, ...]
//           common: one slot per field of the exchange, a vector or nil (nil: in every entry)
//           entry:  [client id, tau_i, eta_i, fields]
//                   fields: one slot per field, a vector, or nil where common holds it
//   ups     [2, layout, round, exchange index, entry, ...]
//           entry:  [client id, local steps, compute s, wait s, transfer s, fields | nil]
//                   fields: one slot per field; nil: the update was not finite
//   vector  [dim, width, count, indices | nil, values]   (wire-vector.ts: the same five members)
//
// Fields of an exchange are ordered by name (code-point order), so that the slot of a field is
// the same on both ends whatever order a method builds its vectors in. Entries are the trailing
// elements of the frame's array, so that a receiver learns each entry's byte length from the
// decoder (codec.ts, FrameElements) and the byte ledger can give each client its own.

import { z } from 'zod';
import type { FieldDims } from './field-dims.js';
import { bytesShape } from './wire-vector.js';

/** Version of the layout below; a frame of another is refused with E_VERSION. */
export const ROUND_FRAME_LAYOUT = 1;

/** The first element of a round frame. */
export const ROUND_FRAME_KINDS = { downs: 1, ups: 2 } as const;
export type RoundFrameKind = keyof typeof ROUND_FRAME_KINDS;

/** Elements of a downs frame before its entries: kind, layout, round, exchange, deadline, common. */
export const DOWNS_HEADER_ELEMENTS = 6;
/** Elements of an ups frame before its entries: kind, layout, round, exchange. */
export const UPS_HEADER_ELEMENTS = 4;

const count = z.number().int().nonnegative();
const seconds = z.number().nonnegative();

/** A vector by position; checkWireVector (wire-vector.ts) checks it in full once named. */
export const vectorTuple = z.tuple([
  z.number(),
  z.union([z.literal(4), z.literal(8)]),
  z.number(),
  bytesShape.nullable(),
  bytesShape,
]);
export const VECTOR_SLOTS = ['dim', 'width', 'count', 'indices', 'values'] as const;

export const downsHeaderTuple = z.tuple([
  z.literal(ROUND_FRAME_KINDS.downs),
  z.literal(ROUND_FRAME_LAYOUT),
  count,
  count,
  z.number().positive().nullable(),
  z.array(vectorTuple.nullable()),
]);
export const DOWNS_HEADER_SLOTS = [
  'kind',
  'layout',
  'round',
  'exchange',
  'deadlineSeconds',
  'common',
] as const;

export const downEntryTuple = z.tuple([
  count,
  z.number().int().positive(),
  z.number().positive(),
  z.array(vectorTuple.nullable()),
]);
export const DOWN_ENTRY_SLOTS = ['clientId', 'localSteps', 'stepSize', 'fields'] as const;

export const upsHeaderTuple = z.tuple([
  z.literal(ROUND_FRAME_KINDS.ups),
  z.literal(ROUND_FRAME_LAYOUT),
  count,
  count,
]);
export const UPS_HEADER_SLOTS = ['kind', 'layout', 'round', 'exchange'] as const;

export const upEntryTuple = z.tuple([
  count,
  count,
  seconds,
  seconds,
  seconds,
  z.array(vectorTuple).nullable(),
]);
export const UP_ENTRY_SLOTS = [
  'clientId',
  'localSteps',
  'computeSeconds',
  'waitSeconds',
  'transferSeconds',
  'fields',
] as const;

/** The field names of one exchange in slot order. */
export function fieldSlots(names: Iterable<string>): string[] {
  return [...names].sort();
}

/** The exchanges in the plan's order (fieldDims lists them in the method's exchange order). */
export function exchangeSlots(fieldDims: FieldDims): string[] {
  return Object.keys(fieldDims);
}
