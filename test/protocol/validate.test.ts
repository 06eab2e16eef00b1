// Every error code from a crafted bad message. Messages go through the real encoder and
// decoder (receiveMessage) unless the fault is one the encoder itself would refuse to write.

import { describe, expect, it } from 'vitest';
import { proveKey } from '../../src/protocol/auth.js';
import { encodeMessage, encodeValue } from '../../src/protocol/codec.js';
import { encodeRoundFrame } from '../../src/protocol/round-frame-encode.js';
import { ROUND_FRAME_LAYOUT } from '../../src/protocol/round-frame-layout.js';
import type { WireVector } from '../../src/protocol/wire-vector.js';
import { ProtocolError, type ProtocolErrorCode } from '../../src/protocol/errors.js';
import { HANDSHAKE_LIMITS } from '../../src/protocol/limits.js';
import {
  NONCE_BYTES,
  PROTOCOL_VERSION,
  type ControlMessage,
  type DownsFrame,
  type Message,
  type UpsFrame,
} from '../../src/protocol/messages.js';
import { receiveMessage } from '../../src/protocol/receive.js';
import { validateMessage, type ValidationContext } from '../../src/protocol/validate.js';
import {
  denseF64,
  DIM,
  DOWN_FIELD_DIMS,
  NONCE,
  PLAN_LIMITS,
  sampleMessages,
  samplePlan,
  serverContext,
  sparseF32,
  SHARED_KEY,
  UP_FIELD_DIMS,
  workerContext,
} from './sample-messages.js';

type Sample<T extends Message['type']> = Extract<Message, { type: T }>;

function sample<T extends Message['type']>(type: T): Sample<T> {
  return sampleMessages().find((m) => m.type === type) as Sample<T>;
}

/** Sends `message` (any shape) through the codec to a receiver with `context`. */
function receive(message: object, context: ValidationContext): Message {
  return receiveMessage(encodeMessage(message as unknown as ControlMessage), context);
}

/** Sends a round frame as the layout writes it, under the sample plan's exchanges. */
function receiveFrame(frame: DownsFrame | UpsFrame, context: ValidationContext): Message {
  const dims = frame.type === 'ups' ? UP_FIELD_DIMS : DOWN_FIELD_DIMS;
  return receiveMessage(encodeRoundFrame(frame, dims), context);
}

/** Sends a round frame's elements as they are: the faults an encoder would not write. */
function receiveRaw(elements: unknown[], context: ValidationContext): Message {
  return receiveMessage(encodeValue(elements), context);
}

type Entry = UpsFrame['entries'][number];
const upEntry = (changes: Partial<Entry> = {}): Entry => ({
  ...sample('ups').entries[0],
  ...changes,
});
/** An ups frame of client 2 alone, with `changes` to its one entry. */
const up = (changes: Partial<Entry> = {}, frame: Partial<UpsFrame> = {}): UpsFrame => ({
  ...sample('ups'),
  entries: [upEntry(changes)],
  ...frame,
});
const down = (changes: Partial<DownsFrame> = {}): DownsFrame => ({
  ...sample('downs'),
  ...changes,
});
/** The vector [dim, width, count, indices, values] as a frame holds it. */
const slot = (wv: WireVector): unknown[] => [wv.dim, wv.width, wv.count, wv.indices, wv.values];
/** A raw ups frame, round 3, exchange 'local' (index 1), with these entries. */
const rawUps = (...entries: unknown[]): unknown[] => [2, ROUND_FRAME_LAYOUT, 3, 1, ...entries];
const rawEntry = (fields: unknown[] | null, changes: Record<number, unknown> = {}): unknown[] => {
  const entry: unknown[] = [2, 4, 0.004, 0, 0.0001, fields];
  for (const [i, v] of Object.entries(changes)) entry[Number(i)] = v;
  return entry;
};

function errorOf(action: () => unknown): ProtocolError {
  try {
    action();
  } catch (error) {
    if (error instanceof ProtocolError) return error;
    throw error;
  }
  throw new Error('expected a ProtocolError, got none');
}

function expectCode(code: ProtocolErrorCode, action: () => unknown, messagePart?: string): void {
  const error = errorOf(action);
  expect(error.code).toBe(code);
  if (messagePart !== undefined) expect(error.message).toContain(messagePart);
}

const hello = (changes: Record<string, unknown>) => ({ ...sample('hello'), ...changes });
const handshake = workerContext({ limits: HANDSHAKE_LIMITS });

describe('validateMessage accepts', () => {
  it('downs for any exchange of the method on a worker, and ups for the current one on the server', () => {
    const gradient = down({
      exchange: 'gradient',
      round: 17,
      common: { model: denseF64([1, 2, 3, 4, 5, 6]) },
      entries: sample('downs').entries.map((e) => ({ ...e, fields: {} })),
    });
    expect(receiveFrame(gradient, workerContext()).type).toBe('downs');
    expect(receiveFrame(sample('downs'), workerContext())).toMatchObject({
      type: 'downs',
      entries: [{ clientId: 2 }, { clientId: 5 }],
    });
    expect(receiveFrame(sample('ups'), serverContext()).type).toBe('ups');
  });
  it("an up entry saying its client's update was not finite, with no fields", () => {
    const message = receiveFrame(up({ fields: {}, updateNotFinite: true }), serverContext());
    expect(message).toMatchObject({
      type: 'ups',
      entries: [{ fields: {}, updateNotFinite: true }],
    });
  });
});

describe('E_TYPE', () => {
  it('a value that is not a map', () => {
    expectCode('E_TYPE', () => validateMessage([1, 2], serverContext()), 'expected a map');
    expectCode('E_TYPE', () => validateMessage('up', serverContext()));
  });

  it('an unknown type, quoted and cut short', () => {
    expectCode(
      'E_TYPE',
      () => receive({ type: 'update' }, serverContext()),
      'unknown message type "update"',
    );
    expectCode(
      'E_TYPE',
      () => receive({ round: 1 }, serverContext()),
      'unknown message type undefined',
    );
    const long = errorOf(() => receive({ type: 'x'.repeat(10_000) }, serverContext()));
    expect(long.message.length).toBeLessThan(200);
  });

  it('a known type the receiver does not expect now', () => {
    expectCode(
      'E_TYPE',
      () => receiveFrame(sample('ups'), serverContext({ expectedTypes: ['hello'] })),
      '"ups" is not expected now (expected hello)',
    );
  });

  it('a missing slot, an extra slot, a slot of the wrong type, naming the path', () => {
    const delta = slot(denseF64([1, 2, 3, 4, 5, 6]));
    expectCode(
      'E_TYPE',
      () => receiveRaw(rawUps(rawEntry([delta]).slice(0, 5)), serverContext()),
      'ups.entries[0]',
    );
    expectCode(
      'E_TYPE',
      () => receiveRaw(rawUps([...rawEntry([delta]), 1]), serverContext()),
      'ups.entries[0]',
    );
    expectCode(
      'E_TYPE',
      () => receiveRaw([2, ROUND_FRAME_LAYOUT, '3', 1, rawEntry([delta])], serverContext()),
      'ups.round',
    );
    expectCode(
      'E_TYPE',
      () => receiveRaw(rawUps(rawEntry([delta], { 0: -1 })), serverContext()),
      'ups.entries[0].clientId',
    );
    expectCode(
      'E_TYPE',
      () => receiveFrame(down({ deadlineSeconds: 0 }), workerContext()),
      'downs.deadlineSeconds',
    );
    const wrongValues = [6, 8, 6, null, [1, 2]];
    expectCode(
      'E_TYPE',
      () => receiveRaw(rawUps(rawEntry([wrongValues])), serverContext()),
      'ups.entries[0].fields.[0].values',
    );
  });

  it('a frame without entries, an unknown kind', () => {
    expectCode('E_TYPE', () => receiveRaw(rawUps(), serverContext()), 'at least one entry');
    expectCode('E_TYPE', () => receiveRaw([9, 1, 3, 1], serverContext()), 'not a round frame kind');
  });
  it('more or fewer slots than the exchange has fields, a field both common and in an entry, or in neither', () => {
    const vector = slot(denseF64([1, 2, 3, 4, 5, 6]));
    expectCode(
      'E_TYPE',
      () => receiveRaw(rawUps(rawEntry([vector, vector])), serverContext()),
      'ups.entries[0].fields: 2 slots, the exchange "local" has 1 fields (delta)',
    );
    // Both, and neither: written by hand, since the encoder puts every field in one place.
    // The exchange 'local' has the fields average and model, in that slot order.
    const average = slot(sample('downs').entries[0].fields.average);
    const model = slot(denseF64([1, 2, 3, 4, 5, 6]));
    expectCode(
      'E_TYPE',
      () =>
        receiveRaw(
          [1, ROUND_FRAME_LAYOUT, 3, 1, null, [null, model], [2, 3, 0.025, [average, model]]],
          workerContext(),
        ),
      'downs.entries[0].fields.model: also in the common section',
    );
    expectCode(
      'E_TYPE',
      () =>
        receiveRaw(
          [1, ROUND_FRAME_LAYOUT, 3, 1, null, [null, null], [2, 3, 0.025, [average, null]]],
          workerContext(),
        ),
      'downs.entries[0].fields.model: missing',
    );
  });
  it('a worker name with control characters, a short proof or nonce, unsorted assignments, an unknown error code', () => {
    expectCode(
      'E_TYPE',
      () => receive(hello({ workerName: 'evil\n[INFO] forged' }), serverContext()),
      'hello.workerName',
    );
    expectCode(
      'E_TYPE',
      () => receive(hello({ proof: new Uint8Array(31) }), serverContext()),
      'hello.proof',
    );
    expectCode(
      'E_TYPE',
      () => receive({ ...sample('challenge'), nonce: new Uint8Array(NONCE_BYTES - 1) }, handshake),
      'challenge.nonce',
    );
    expectCode(
      'E_TYPE',
      () => receive({ ...sample('welcome'), assignments: [5, 2] }, handshake),
      'welcome.assignments[1]',
    );
    expectCode(
      'E_TYPE',
      () => receive({ type: 'error', code: 'E_UNKNOWN', message: 'x' }, workerContext()),
      'error.code',
    );
  });

  it('welcome limits that do not make sense', () => {
    const limits = {
      ...PLAN_LIMITS,
      heartbeatSilenceSeconds: PLAN_LIMITS.heartbeatIntervalSeconds,
    };
    expectCode(
      'E_TYPE',
      () => receive({ ...sample('welcome'), limits }, handshake),
      'welcome.limits.heartbeatSilenceSeconds',
    );
  });

  it('a welcome plan with a malformed field, named by its path', () => {
    const plan = samplePlan();
    expectCode(
      'E_TYPE',
      () => receive({ ...sample('welcome'), plan: { ...plan, dim: 0 } }, handshake),
      'welcome.plan.dim',
    );
    expectCode(
      'E_TYPE',
      () => receive({ ...sample('welcome'), plan: { ...plan, dim: 2.5 } }, handshake),
      'welcome.plan.dim',
    );
    const methodConfig = { ...plan.methodConfig, stepSize: 'fast' };
    expectCode(
      'E_TYPE',
      () => receive({ ...sample('welcome'), plan: { ...plan, methodConfig } }, handshake),
      'welcome.plan.methodConfig.stepSize',
    );
    expectCode(
      'E_TYPE',
      () =>
        receive({ ...sample('welcome'), plan: { scenario: plan.scenario, dim: DIM } }, handshake),
      'welcome.plan.methodConfig',
    );
    expectCode(
      'E_TYPE',
      () => receive({ ...sample('welcome'), plan: { ...plan, extra: 1 } }, handshake),
      'welcome.plan',
    );
  });

  it('a welcome plan whose scenario breaks the scenario schema, described as a scenario file would be', () => {
    const plan = samplePlan();
    const scenario = { ...plan.scenario, clients: { ...plan.scenario.clients, count: -1 } };
    const error = errorOf(() =>
      receive({ ...sample('welcome'), plan: { ...plan, scenario } }, handshake),
    );
    expect(error.code).toBe('E_TYPE');
    expect(error.message).toMatch(/^welcome\.plan\.scenario\.clients\.count: expected .*, got -1/);
    const misspelt = { ...plan.scenario, sed: 7 };
    expectCode(
      'E_TYPE',
      () => receive({ ...sample('welcome'), plan: { ...plan, scenario: misspelt } }, handshake),
      'welcome.plan.scenario.sed: unknown key',
    );
  });
});

describe('E_VERSION', () => {
  it('a hello or challenge of another protocol version, even in another shape', () => {
    expectCode('E_VERSION', () =>
      receive(hello({ protocolVersion: PROTOCOL_VERSION + 1 }), serverContext()),
    );
    expectCode('E_VERSION', () =>
      receive({ type: 'hello', protocolVersion: PROTOCOL_VERSION + 1, name: 'x' }, serverContext()),
    );
    expectCode('E_VERSION', () =>
      receive({ ...sample('challenge'), protocolVersion: 0 }, handshake),
    );
  });
});

describe('E_ROUND', () => {
  it('ups for another round or exchange than the one in progress', () => {
    expectCode(
      'E_ROUND',
      () => receiveFrame(up({}, { round: 2 }), serverContext()),
      'expected round 3, got 2',
    );
    expectCode(
      'E_ROUND',
      () =>
        receiveFrame(
          up({ fields: { gradient: denseF64([1, 2, 3, 4, 5, 6]) } }, { exchange: 'gradient' }),
          serverContext(),
        ),
      'expected "local"',
    );
  });
  it('downs for an exchange index the method does not have', () => {
    expectCode(
      'E_ROUND',
      () => receiveRaw([1, ROUND_FRAME_LAYOUT, 3, 2, null, [null]], workerContext()),
      'downs.exchange: index 2, the method has 2 exchanges',
    );
  });
});

describe('E_CLIENT', () => {
  it('a client id the worker does not host, on either end, or a client twice in one frame', () => {
    expectCode('E_CLIENT', () => receiveFrame(up({ clientId: 3 }), serverContext()), 'client 3');
    const [first, second] = sample('downs').entries;
    expectCode('E_CLIENT', () =>
      receiveFrame(down({ entries: [{ ...first, clientId: 0 }, second] }), workerContext()),
    );
    expectCode(
      'E_CLIENT',
      () => receiveFrame(up({}, { entries: [upEntry(), upEntry()] }), serverContext()),
      'ups.entries[1].clientId: client 2 is in the frame twice',
    );
  });
  it("a welcome assigning a client beyond the plan's clients", () => {
    expectCode(
      'E_CLIENT',
      () => receive({ ...sample('welcome'), assignments: [2, 6] }, handshake),
      'welcome.assignments[1]: client 6',
    );
  });
});

describe('E_DIMENSION', () => {
  it("a dimension other than the plan's", () => {
    expectCode(
      'E_DIMENSION',
      () => receiveFrame(up({ fields: { delta: denseF64([1, 2, 3, 4, 5]) } }), serverContext()),
      'the plan says 6, got 5',
    );
  });

  it('an index out of range', () => {
    const vector = { ...sparseF32(DIM + 1, [1, DIM], [1, 2]), dim: DIM };
    expectCode(
      'E_DIMENSION',
      () => receiveFrame(up({ fields: { delta: vector } }), serverContext()),
      'ups.entries[0].fields.delta.indices',
    );
  });

  it('a count that does not match the indices or the values', () => {
    const vector = sparseF32(DIM, [1, 2], [1, 2]);
    expectCode(
      'E_DIMENSION',
      () => receiveFrame(up({ fields: { delta: { ...vector, count: 1 } } }), serverContext()),
      'ups.entries[0].fields.delta.values',
    );
    expectCode('E_DIMENSION', () =>
      receiveFrame(
        up({ fields: { delta: { ...vector, count: 3, values: new Uint8Array(12) } } }),
        serverContext(),
      ),
    );
  });
});

describe('E_NOT_FINITE', () => {
  it('NaN or an infinity in a vector', () => {
    const vector = denseF64([1, 2, 3, 4, 5, 6]);
    new DataView(vector.values.buffer).setFloat64(16, -Infinity, true);
    expectCode(
      'E_NOT_FINITE',
      () => receiveFrame(up({ fields: { delta: vector } }), serverContext()),
      'ups.entries[0].fields.delta.values: value 2 is -Infinity',
    );
  });

  it('NaN or an infinity in a scalar', () => {
    expectCode(
      'E_NOT_FINITE',
      () =>
        receiveRaw(
          rawUps(rawEntry([slot(denseF64([1, 2, 3, 4, 5, 6]))], { 2: Infinity })),
          serverContext(),
        ),
      'ups.entries[0].computeSeconds',
    );
    expectCode(
      'E_NOT_FINITE',
      () =>
        receiveRaw(
          [
            1,
            ROUND_FRAME_LAYOUT,
            3,
            0,
            null,
            [null],
            [2, 1, NaN, [slot(denseF64([1, 2, 3, 4, 5, 6]))]],
          ],
          workerContext(),
        ),
      'downs.entries[0].stepSize',
    );
    expectCode(
      'E_NOT_FINITE',
      () => receive({ type: 'heartbeat', sentAtMs: NaN }, workerContext()),
      'heartbeat.sentAtMs',
    );
  });
});

describe('E_SIZE', () => {
  it('more entries than the worker has clients', () => {
    const limits = { ...PLAN_LIMITS, maxClientsPerWorker: 1 };
    expectCode(
      'E_SIZE',
      () => receiveFrame(sample('downs'), workerContext({ limits })),
      'downs.entries: 2 entries, at most 1',
    );
  });
  it('a dimension beyond the limit', () => {
    const big = denseF64(new Array(DIM + 1).fill(0));
    expectCode(
      'E_SIZE',
      () => receiveRaw(rawUps(rawEntry([slot(big)])), serverContext()),
      'exceeds the limit of 6',
    );
  });
  it('strings beyond their limits', () => {
    expectCode(
      'E_SIZE',
      () =>
        receive(
          hello({ workerName: 'w'.repeat(PLAN_LIMITS.maxWorkerNameLength + 1) }),
          serverContext(),
        ),
      'hello.workerName',
    );
    expectCode(
      'E_SIZE',
      () =>
        receive(
          {
            type: 'error',
            code: 'E_TYPE',
            message: 'm'.repeat(PLAN_LIMITS.maxErrorMessageLength + 1),
          },
          workerContext(),
        ),
      'error.message',
    );
  });

  it('more clients than a worker may host', () => {
    expectCode('E_SIZE', () => receive(hello({ capacity: 3 }), serverContext()), 'hello.capacity');
    const assignments = Array.from(
      { length: HANDSHAKE_LIMITS.maxClientsPerWorker + 1 },
      (_, i) => i,
    );
    expectCode(
      'E_SIZE',
      () => receive({ ...sample('welcome'), assignments }, handshake),
      'welcome.assignments',
    );
  });
});

describe('E_AUTH', () => {
  it('a proof under another key, or for another nonce', () => {
    expectCode('E_AUTH', () =>
      receive(hello({ proof: proveKey('a-wrong-shared-key', NONCE) }), serverContext()),
    );
    const otherNonce = NONCE.map((b) => b ^ 1);
    expectCode('E_AUTH', () =>
      receive(hello({ proof: proveKey(SHARED_KEY, otherNonce) }), serverContext()),
    );
  });

  it('accepts the right proof', () => {
    expect(receive(hello({}), serverContext()).type).toBe('hello');
  });
});
