// Every error code from a crafted bad message. Messages go through the real encoder and
// decoder (receiveMessage) unless the fault is one the encoder itself would refuse to write.

import { describe, expect, it } from 'vitest';
import { proveKey } from '../../src/protocol/auth.js';
import { encodeMessage } from '../../src/protocol/codec.js';
import { ProtocolError, type ProtocolErrorCode } from '../../src/protocol/errors.js';
import { HANDSHAKE_LIMITS } from '../../src/protocol/limits.js';
import { NONCE_BYTES, PROTOCOL_VERSION, type Message } from '../../src/protocol/messages.js';
import { receiveMessage } from '../../src/protocol/receive.js';
import { validateMessage, type ValidationContext } from '../../src/protocol/validate.js';
import {
  denseF64,
  DIM,
  NONCE,
  PLAN_LIMITS,
  sampleMessages,
  samplePlan,
  serverContext,
  sparseF32,
  SHARED_KEY,
  workerContext,
} from './sample-messages.js';

type Sample<T extends Message['type']> = Extract<Message, { type: T }>;

function sample<T extends Message['type']>(type: T): Sample<T> {
  return sampleMessages().find((m) => m.type === type) as Sample<T>;
}

/** Sends `message` (any shape) through the codec to a receiver with `context`. */
function receive(message: object, context: ValidationContext): Message {
  return receiveMessage(encodeMessage(message as unknown as Message), context);
}

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

const up = (changes: Record<string, unknown>) => ({ ...sample('up'), ...changes });
const down = (changes: Record<string, unknown>) => ({ ...sample('down'), ...changes });
const hello = (changes: Record<string, unknown>) => ({ ...sample('hello'), ...changes });
const handshake = workerContext({ limits: HANDSHAKE_LIMITS });

describe('validateMessage accepts', () => {
  it('a down for any exchange of the method on a worker, and an up for the current one on the server', () => {
    expect(
      receive(
        down({ exchange: 'gradient', round: 17, fields: { model: denseF64([1, 2, 3, 4, 5, 6]) } }),
        workerContext(),
      ).type,
    ).toBe('down');
    expect(receive(up({}), serverContext()).type).toBe('up');
  });

  it("an up saying its client's update was not finite, with no fields", () => {
    const message = receive(up({ fields: {}, updateNotFinite: true }), serverContext());
    expect(message).toMatchObject({ type: 'up', fields: {}, updateNotFinite: true });
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
      () => receive(sample('up'), serverContext({ expectedTypes: ['hello'] })),
      '"up" is not expected now (expected hello)',
    );
  });

  it('a missing field, an extra field, a field of the wrong type, naming the path', () => {
    const { localSteps: _omitted, ...withoutSteps } = sample('up');
    expectCode('E_TYPE', () => receive(withoutSteps, serverContext()), 'up.localSteps');
    expectCode('E_TYPE', () => receive(up({ extra: 1 }), serverContext()), 'extra');
    expectCode('E_TYPE', () => receive(up({ round: '3' }), serverContext()), 'up.round');
    expectCode('E_TYPE', () => receive(up({ clientId: -1 }), serverContext()), 'up.clientId');
    expectCode(
      'E_TYPE',
      () => receive(down({ deadlineSeconds: 0 }), workerContext()),
      'down.deadlineSeconds',
    );
    const vector = { ...denseF64([1, 2, 3, 4, 5, 6]), values: [1, 2] };
    expectCode(
      'E_TYPE',
      () => receive(up({ fields: { delta: vector } }), serverContext()),
      'up.fields.delta.values',
    );
  });

  it('a not-finite mark that is not true, or that comes with fields', () => {
    expectCode(
      'E_TYPE',
      () => receive(up({ fields: {}, updateNotFinite: false }), serverContext()),
      'up.updateNotFinite',
    );
    expectCode(
      'E_TYPE',
      () => receive(up({ updateNotFinite: true }), serverContext()),
      'up.fields: must be empty',
    );
  });

  it('a field the exchange does not have, or a missing one', () => {
    const vector = denseF64([1, 2, 3, 4, 5, 6]);
    expectCode(
      'E_TYPE',
      () => receive(up({ fields: { delta: vector, extra: vector } }), serverContext()),
      'up.fields.extra: not a field',
    );
    expectCode(
      'E_TYPE',
      () => receive(down({ fields: { model: vector } }), workerContext()),
      'down.fields.average: missing',
    );
  });

  it('a field or exchange name that is not an ASCII identifier', () => {
    const vector = denseF64([1, 2, 3, 4, 5, 6]);
    expectCode(
      'E_TYPE',
      () => receive(up({ fields: { 'de lta': vector } }), serverContext({ fieldDims: null })),
      '"de lta" is not a name',
    );
    expectCode('E_TYPE', () =>
      receive(
        up({ exchange: 'lo\ncal' }),
        serverContext({ expectedExchange: null, fieldDims: null }),
      ),
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
  it('an up for another round or exchange than the one in progress', () => {
    expectCode(
      'E_ROUND',
      () => receive(up({ round: 2 }), serverContext()),
      'expected round 3, got 2',
    );
    expectCode(
      'E_ROUND',
      () =>
        receive(
          up({ exchange: 'gradient', fields: { gradient: denseF64([1, 2, 3, 4, 5, 6]) } }),
          serverContext(),
        ),
      'expected "local"',
    );
  });

  it('a down for an exchange the method does not have', () => {
    expectCode(
      'E_ROUND',
      () => receive(down({ exchange: 'prox' }), workerContext()),
      '"prox" is not an exchange',
    );
  });
});

describe('E_CLIENT', () => {
  it('a client id the worker does not host, on either end', () => {
    expectCode('E_CLIENT', () => receive(up({ clientId: 3 }), serverContext()), 'client 3');
    expectCode('E_CLIENT', () => receive(down({ clientId: 0 }), workerContext()));
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
      () => receive(up({ fields: { delta: denseF64([1, 2, 3, 4, 5]) } }), serverContext()),
      'the plan says 6, got 5',
    );
  });

  it('an index out of range', () => {
    const vector = { ...sparseF32(DIM + 1, [1, DIM], [1, 2]), dim: DIM };
    expectCode(
      'E_DIMENSION',
      () => receive(up({ fields: { delta: vector } }), serverContext()),
      'up.fields.delta.indices',
    );
  });

  it('a count that does not match the indices or the values', () => {
    const vector = sparseF32(DIM, [1, 2], [1, 2]);
    expectCode(
      'E_DIMENSION',
      () => receive(up({ fields: { delta: { ...vector, count: 1 } } }), serverContext()),
      'up.fields.delta.values',
    );
    expectCode('E_DIMENSION', () =>
      receive(
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
      () => receive(up({ fields: { delta: vector } }), serverContext()),
      'up.fields.delta.values: value 2 is -Infinity',
    );
  });

  it('NaN or an infinity in a scalar', () => {
    expectCode(
      'E_NOT_FINITE',
      () => receive(up({ computeSeconds: Infinity }), serverContext()),
      'up.computeSeconds',
    );
    expectCode(
      'E_NOT_FINITE',
      () => receive(down({ stepSize: NaN }), workerContext()),
      'down.stepSize',
    );
    expectCode(
      'E_NOT_FINITE',
      () => receive({ type: 'heartbeat', sentAtMs: NaN }, workerContext()),
      'heartbeat.sentAtMs',
    );
  });
});

describe('E_SIZE', () => {
  const vector = denseF64([1, 2, 3, 4, 5, 6]);

  it('more fields than the limit', () => {
    const fields = { a: vector, b: vector, c: vector };
    expectCode(
      'E_SIZE',
      () => receive(up({ fields }), serverContext({ fieldDims: null })),
      '3 fields, at most 2',
    );
  });

  it('a dimension beyond the limit, even when the plan is not checked', () => {
    const big = denseF64(new Array(DIM + 1).fill(0));
    expectCode(
      'E_SIZE',
      () => receive(up({ fields: { delta: big } }), serverContext({ fieldDims: null })),
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
      () => receive(up({ exchange: 'x'.repeat(65) }), serverContext()),
      'up.exchange',
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
