// A decoded round frame (FrameElements, codec.ts) -> a typed downs or ups frame, or a
// ProtocolError naming the entry and field at fault. Every entry is checked before the frame is
// returned, so a receiver never uses part of a bad frame. Checks run in the order validate.ts
// keeps for every message: the layout's version (E_VERSION), shapes (E_TYPE, E_NOT_FINITE),
// the round and exchange (E_ROUND), the entries' clients (E_CLIENT: hosted by this worker, each
// once), the number of entries (E_SIZE), then each vector against the plan (E_DIMENSION,
// E_NOT_FINITE, E_SIZE).

import type { z } from 'zod';
import type { FrameElements } from './codec.js';
import { ProtocolError } from './errors.js';
import type { DownEntry, DownsFrame, UpEntry, UpsFrame, WireFields } from './messages.js';
import {
  DOWN_ENTRY_SLOTS,
  DOWNS_HEADER_ELEMENTS,
  DOWNS_HEADER_SLOTS,
  ROUND_FRAME_KINDS,
  ROUND_FRAME_LAYOUT,
  UP_ENTRY_SLOTS,
  UPS_HEADER_ELEMENTS,
  UPS_HEADER_SLOTS,
  VECTOR_SLOTS,
  downEntryTuple,
  downsHeaderTuple,
  exchangeSlots,
  fieldSlots,
  upEntryTuple,
  upsHeaderTuple,
  type RoundFrameKind,
} from './round-frame-layout.js';
import type { ValidationContext } from './validate.js';
import { ValueBlock, checkWireVector, type ValueStore, type WireVector } from './wire-vector.js';

type VectorTuple = z.infer<typeof downsHeaderTuple>[5][number] & object;

function kindOf(raw: FrameElements): RoundFrameKind {
  const kind = raw.elements[0];
  if (kind === ROUND_FRAME_KINDS.downs) return 'downs';
  if (kind === ROUND_FRAME_KINDS.ups) return 'ups';
  throw new ProtocolError('E_TYPE', `frame[0]: not a round frame kind (1: downs, 2: ups)`);
}

/** A zod issue's path in names: slots by name, fields by their name in the exchange. */
function namedPath(
  base: string,
  path: readonly PropertyKey[],
  slots: readonly string[],
  fieldNames: readonly string[],
): string {
  const [slot, field, member, ...rest] = path;
  let out = base;
  if (typeof slot === 'number') out += `.${slots[slot] ?? `[${slot}]`}`;
  if (typeof field === 'number') out += `.${fieldNames[field] ?? `[${field}]`}`;
  if (typeof member === 'number') out += `.${VECTOR_SLOTS[member] ?? `[${member}]`}`;
  for (const key of rest) out += `[${String(key)}]`;
  return out;
}

function parseTuple<T>(
  schema: z.ZodType<T>,
  raw: unknown,
  base: string,
  slots: readonly string[],
  fieldNames: readonly string[],
): T {
  const result = schema.safeParse(raw);
  if (result.success) return result.data;
  const issue = result.error.issues[0];
  let value: unknown = raw;
  for (const key of issue.path)
    value = Array.isArray(value) ? (value as unknown[])[key as number] : undefined;
  const code = typeof value === 'number' && !Number.isFinite(value) ? 'E_NOT_FINITE' : 'E_TYPE';
  throw new ProtocolError(
    code,
    `${namedPath(base, issue.path, slots, fieldNames)}: ${issue.message}`,
  );
}

function named(tuple: VectorTuple): WireVector {
  const [dim, width, count, indices, values] = tuple;
  return { dim, width, count, indices, values };
}

function checkVector(
  wv: WireVector,
  expectedDim: number,
  path: string,
  context: ValidationContext,
  store?: ValueStore,
): void {
  if (wv.dim > context.limits.maxVectorDim) {
    throw new ProtocolError(
      'E_SIZE',
      `${path}.dim: ${wv.dim} exceeds the limit of ${context.limits.maxVectorDim}`,
    );
  }
  if (wv.dim !== expectedDim) {
    throw new ProtocolError(
      'E_DIMENSION',
      `${path}.dim: the plan says ${expectedDim}, got ${wv.dim}`,
    );
  }
  checkWireVector(wv, path, store);
}

interface Header {
  round: number;
  exchange: string;
  fieldNames: string[];
  dims: number[];
}

/** The round and exchange a frame names, checked against the plan and the receiver's state. */
function checkHeader(
  type: RoundFrameKind,
  round: number,
  exchangeIndex: number,
  context: ValidationContext,
): Header {
  const fieldDims = context.fieldDims;
  if (fieldDims === null)
    throw new ProtocolError('E_TYPE', `${type}: a round frame before the plan is known`);
  const exchanges = exchangeSlots(fieldDims);
  if (exchangeIndex >= exchanges.length) {
    throw new ProtocolError(
      'E_ROUND',
      `${type}.exchange: index ${exchangeIndex}, the method has ${exchanges.length} exchanges`,
    );
  }
  const exchange = exchanges[exchangeIndex];
  if (context.expectedRound !== null && round !== context.expectedRound) {
    throw new ProtocolError(
      'E_ROUND',
      `${type}.round: expected round ${context.expectedRound}, got ${round}`,
    );
  }
  if (context.expectedExchange !== null && exchange !== context.expectedExchange) {
    throw new ProtocolError(
      'E_ROUND',
      `${type}.exchange: expected "${context.expectedExchange}", got "${exchange}"`,
    );
  }
  const fieldNames = fieldSlots(Object.keys(fieldDims[exchange]));
  return { round, exchange, fieldNames, dims: fieldNames.map((name) => fieldDims[exchange][name]) };
}

function checkClients(
  type: RoundFrameKind,
  clientIds: readonly number[],
  context: ValidationContext,
): void {
  if (clientIds.length === 0)
    throw new ProtocolError('E_TYPE', `${type}.entries: a round frame holds at least one entry`);
  const seen = new Set<number>();
  clientIds.forEach((clientId, i) => {
    const path = `${type}.entries[${i}].clientId`;
    if (context.ownedClientIds !== null && !context.ownedClientIds.has(clientId))
      throw new ProtocolError(
        'E_CLIENT',
        `${path}: client ${clientId} is not hosted by this worker`,
      );
    if (seen.has(clientId))
      throw new ProtocolError('E_CLIENT', `${path}: client ${clientId} is in the frame twice`);
    seen.add(clientId);
  });
  if (clientIds.length > context.limits.maxClientsPerWorker) {
    throw new ProtocolError(
      'E_SIZE',
      `${type}.entries: ${clientIds.length} entries, at most ${context.limits.maxClientsPerWorker}`,
    );
  }
}

function checkSlotCount(slots: readonly unknown[], header: Header, path: string): void {
  if (slots.length !== header.fieldNames.length) {
    throw new ProtocolError(
      'E_TYPE',
      `${path}: ${slots.length} slots, the exchange "${header.exchange}" has ${header.fieldNames.length} fields (${header.fieldNames.join(', ')})`,
    );
  }
}

function validateDowns(raw: FrameElements, context: ValidationContext): DownsFrame {
  const type = 'downs';
  const elements = raw.elements;
  const [, , round, exchangeIndex, deadlineSeconds, commonSlots] = parseTuple(
    downsHeaderTuple,
    elements.slice(0, DOWNS_HEADER_ELEMENTS),
    type,
    DOWNS_HEADER_SLOTS,
    [],
  );
  const entries = elements
    .slice(DOWNS_HEADER_ELEMENTS)
    .map((entry, i) =>
      parseTuple(downEntryTuple, entry, `${type}.entries[${i}]`, DOWN_ENTRY_SLOTS, []),
    );
  const header = checkHeader(type, round, exchangeIndex, context);
  checkClients(
    type,
    entries.map(([clientId]) => clientId),
    context,
  );
  checkSlotCount(commonSlots, header, `${type}.common`);
  const common: WireFields = {};
  header.fieldNames.forEach((name, j) => {
    const tuple = commonSlots[j];
    if (tuple === null) return;
    const wv = named(tuple);
    checkVector(wv, header.dims[j], `${type}.common.${name}`, context);
    common[name] = wv;
  });
  const out: DownEntry[] = entries.map(([clientId, localSteps, stepSize, slots], i) => {
    const path = `${type}.entries[${i}].fields`;
    checkSlotCount(slots, header, path);
    const fields: WireFields = {};
    header.fieldNames.forEach((name, j) => {
      const tuple = slots[j];
      const inCommon = commonSlots[j] !== null;
      if (tuple === null && !inCommon)
        throw new ProtocolError(
          'E_TYPE',
          `${path}.${name}: missing (and not in the common section)`,
        );
      if (tuple === null) return;
      if (inCommon)
        throw new ProtocolError('E_TYPE', `${path}.${name}: also in the common section`);
      const wv = named(tuple);
      checkVector(wv, header.dims[j], `${path}.${name}`, context);
      fields[name] = wv;
    });
    return { clientId, localSteps, stepSize, fields };
  });
  return {
    type,
    round,
    exchange: header.exchange,
    deadlineSeconds,
    common,
    entries: out,
  };
}

function validateUps(raw: FrameElements, context: ValidationContext): UpsFrame {
  const type = 'ups';
  const elements = raw.elements;
  const [, , round, exchangeIndex] = parseTuple(
    upsHeaderTuple,
    elements.slice(0, UPS_HEADER_ELEMENTS),
    type,
    UPS_HEADER_SLOTS,
    [],
  );
  const entries = elements
    .slice(UPS_HEADER_ELEMENTS)
    .map((entry, i) =>
      parseTuple(upEntryTuple, entry, `${type}.entries[${i}]`, UP_ENTRY_SLOTS, []),
    );
  const header = checkHeader(type, round, exchangeIndex, context);
  checkClients(
    type,
    entries.map(([clientId]) => clientId),
    context,
  );
  const vectorsOf = entries.map(([, , , , , slots], i) => {
    if (slots === null) return null;
    checkSlotCount(slots, header, `${type}.entries[${i}].fields`);
    return slots.map(named);
  });
  // The coordinator aggregates every up of the frame within the round: one block holds them all.
  const block = new ValueBlock(ValueBlock.bytesFor(vectorsOf.flatMap((vectors) => vectors ?? [])));
  const out: UpEntry[] = entries.map(
    ([clientId, localSteps, computeSeconds, waitSeconds, transferSeconds], i) => {
      const timings = { localSteps, computeSeconds, waitSeconds, transferSeconds };
      const vectors = vectorsOf[i];
      if (vectors === null) return { clientId, fields: {}, updateNotFinite: true, ...timings };
      const path = `${type}.entries[${i}].fields`;
      const fields: WireFields = {};
      header.fieldNames.forEach((name, j) => {
        const wv = vectors[j];
        checkVector(wv, header.dims[j], `${path}.${name}`, context, block);
        fields[name] = wv;
      });
      return { clientId, fields, ...timings };
    },
  );
  return {
    type,
    round,
    exchange: header.exchange,
    entries: out,
    entryBytes: raw.elementBytes.slice(UPS_HEADER_ELEMENTS),
  };
}

/** A round frame this receiver may use now. Throws ProtocolError. */
export function validateRoundFrame(
  raw: FrameElements,
  context: ValidationContext,
): DownsFrame | UpsFrame {
  const type = kindOf(raw);
  if (!context.expectedTypes.includes(type)) {
    throw new ProtocolError(
      'E_TYPE',
      `type: "${type}" is not expected now (expected ${context.expectedTypes.join(', ')})`,
    );
  }
  const layout = raw.elements[1];
  if (layout !== ROUND_FRAME_LAYOUT) {
    throw new ProtocolError(
      'E_VERSION',
      `${type}.layout: this end reads round frame layout ${ROUND_FRAME_LAYOUT}, the peer sent ${typeof layout === 'number' ? layout : 'none'}`,
    );
  }
  return type === 'downs' ? validateDowns(raw, context) : validateUps(raw, context);
}
