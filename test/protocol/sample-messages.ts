// Messages and receiver contexts shared by the protocol tests: a worker hosting clients 2 and 5
// of a method with a 'gradient' and a 'local' exchange (in that order), in round 3. Values are arbitrary
// inputs; no test asserts a number taken from here without computing it.

import { proveKey } from '../../src/protocol/auth.js';
import { encodeMessage } from '../../src/protocol/codec.js';
import { encodeRoundFrame } from '../../src/protocol/round-frame-encode.js';
import { HANDSHAKE_LIMITS, limitsForPlan, type ProtocolLimits } from '../../src/protocol/limits.js';
import { NONCE_BYTES, PROTOCOL_VERSION, type Message } from '../../src/protocol/messages.js';
import type { FieldDims } from '../../src/protocol/field-dims.js';
import type { ValidationContext } from '../../src/protocol/validate.js';
import { toWire, type WireVector } from '../../src/protocol/wire-vector.js';
import type { WirePlan } from '../../src/protocol/wire-plan.js';
import { validateScenario } from '../../src/scenario/validate-scenario.js';

export const DIM = 6;
export const SHARED_KEY = 'shared-secret-for-tests';
export const NONCE = Uint8Array.from({ length: NONCE_BYTES }, (_, i) => (i * 37 + 11) & 0xff);

/** Downs a worker reads, per exchange. */
export const DOWN_FIELD_DIMS: FieldDims = {
  gradient: { model: DIM },
  local: { model: DIM, average: DIM },
};
/** Ups the server reads, per exchange. */
export const UP_FIELD_DIMS: FieldDims = { gradient: { gradient: DIM }, local: { delta: DIM } };

export const PLAN_LIMITS: ProtocolLimits = limitsForPlan({
  downFieldDims: DOWN_FIELD_DIMS,
  upFieldDims: UP_FIELD_DIMS,
  clientsPerWorker: 2,
});

/** A welcome's plan: 6 clients of a 6-dimensional least-squares problem under FedLin. */
export function samplePlan(): WirePlan {
  const scenario = validateScenario({
    name: 'tiny',
    seed: 7,
    problem: { kind: 'least-squares' },
    data: { source: 'synthetic', features: DIM },
    clients: { count: 6 },
    method: { name: 'fedlin', localSteps: [3, 4] },
    run: { rounds: 3 },
  });
  const methodConfig = {
    clientCount: 6,
    stepSize: 0.025,
    serverStepSize: 1,
    proxCoefficient: 0.1,
    proxTolerance: 0,
  };
  return { scenario, methodConfig, dim: DIM };
}

export function denseF64(values: number[]): WireVector {
  return toWire({ dim: values.length, indices: null, values: Float64Array.from(values) });
}

export function sparseF32(dim: number, indices: number[], values: number[]): WireVector {
  return toWire({ dim, indices: Uint32Array.from(indices), values: Float32Array.from(values) });
}

export function sampleMessages(): Message[] {
  return [
    { type: 'challenge', protocolVersion: PROTOCOL_VERSION, nonce: NONCE },
    {
      type: 'hello',
      protocolVersion: PROTOCOL_VERSION,
      workerName: 'laptop-1',
      capacity: 2,
      proof: proveKey(SHARED_KEY, NONCE),
    },
    {
      type: 'welcome',
      assignments: [2, 5],
      plan: samplePlan(),
      limits: PLAN_LIMITS,
    },
    { type: 'ready' },
    {
      type: 'downs',
      round: 3,
      exchange: 'local',
      deadlineSeconds: 1.5,
      common: { model: denseF64([1.5, -0, 5e-324, -2.25, 1e300, 0.1]) },
      entries: [
        {
          clientId: 2,
          localSteps: 3,
          stepSize: 0.025,
          fields: { average: sparseF32(DIM, [1], [2]) },
        },
        {
          clientId: 5,
          localSteps: 4,
          stepSize: 0.025,
          fields: { average: sparseF32(DIM, [0, 4], [0.5, -3]) },
        },
      ],
    },
    {
      type: 'ups',
      round: 3,
      exchange: 'local',
      entries: [
        {
          clientId: 2,
          fields: {
            delta: sparseF32(DIM, [1, 2, 5], [Math.fround(0.1), -0, 1.401298464324817e-45]),
          },
          localSteps: 4,
          computeSeconds: 0.004,
          waitSeconds: 0,
          transferSeconds: 0.0001,
        },
        {
          clientId: 5,
          fields: {},
          updateNotFinite: true,
          localSteps: 2,
          computeSeconds: 0,
          waitSeconds: 0,
          transferSeconds: 0,
        },
      ],
    },
    { type: 'heartbeat', sentAtMs: 1_700_000_000_123 },
    { type: 'error', code: 'E_DIMENSION', message: 'up.fields.delta.dim: the plan says 6, got 7' },
    { type: 'done', reason: 'target-reached' },
    { type: 'checkpoint', round: 3 },
    {
      type: 'state',
      round: 3,
      clientId: 5,
      tree: JSON.stringify({ tree: { clientId: 5, z: { $f64: 0 } }, lengths: [2] }),
      vectors: Uint8Array.from([0, 0, 0, 0, 0, 0, 0xf8, 0x3f, 0, 0, 0, 0, 0, 0, 0, 0x80]),
    },
  ];
}

/** The coordinator's view of one worker's connection, in round 3, exchange 'local'. */
export function serverContext(overrides: Partial<ValidationContext> = {}): ValidationContext {
  return {
    limits: PLAN_LIMITS,
    expectedTypes: ['hello', 'ready', 'ups', 'state', 'heartbeat', 'error'],
    expectedRound: 3,
    expectedExchange: 'local',
    ownedClientIds: new Set([2, 5]),
    fieldDims: UP_FIELD_DIMS,
    auth: { key: SHARED_KEY, nonce: NONCE },
    ...overrides,
  };
}

/** A worker's view after the welcome: any round, any exchange of the method. */
export function workerContext(overrides: Partial<ValidationContext> = {}): ValidationContext {
  return {
    limits: PLAN_LIMITS,
    expectedTypes: [
      'challenge',
      'welcome',
      'downs',
      'heartbeat',
      'error',
      'done',
      'checkpoint',
      'state',
    ],
    expectedRound: null,
    expectedExchange: null,
    ownedClientIds: new Set([2, 5]),
    fieldDims: DOWN_FIELD_DIMS,
    auth: null,
    ...overrides,
  };
}

/** The context that reads each sample: the worker's for what the server sends, and back. */
export function contextFor(message: Message): ValidationContext {
  switch (message.type) {
    case 'hello':
    case 'ready':
    case 'ups':
      return serverContext();
    case 'challenge':
    case 'welcome':
      return workerContext({ limits: HANDSHAKE_LIMITS });
    default:
      return workerContext();
  }
}

/** Any message's bytes: a control message by its encoder, a round frame by the sample plan's layout. */
export function encodeSample(message: Message): Uint8Array {
  if (message.type === 'downs') return encodeRoundFrame(message, DOWN_FIELD_DIMS);
  if (message.type === 'ups') return encodeRoundFrame(message, UP_FIELD_DIMS);
  return encodeMessage(message);
}

/** Deep copy with every Uint8Array (or Buffer) as a plain byte list, for structural comparison. */
export function plain(value: unknown): unknown {
  if (value instanceof Uint8Array) return { bytes: Array.from(value) };
  if (Array.isArray(value)) return value.map(plain);
  if (value !== null && typeof value === 'object') {
    return Object.fromEntries(Object.entries(value).map(([k, v]) => [k, plain(v)]));
  }
  return value;
}
