// Decoded plain data -> a typed message, or a ProtocolError with a stable code and the path of
// the offending field. Round frames (downs, ups) are read by validate-round-frame.ts. Shapes are the zod schemas of messages.ts (E_TYPE; E_NOT_FINITE where the wrong value is a
// NaN or an infinity); what depends on the receiver's state comes after, from the context:
// the round and exchange in progress (E_ROUND), the clients this connection may name
// (E_CLIENT), the plan's dimensions (E_DIMENSION), the limits (E_SIZE), the challenge (E_AUTH).
// Checks run in that order, so a message with several faults always reports the same one.

import type { z } from 'zod';
import { verifyProof } from './auth.js';
import { ProtocolError } from './errors.js';
import type { ProtocolLimits } from './limits.js';
import {
  MESSAGE_TYPES,
  NAME_LENGTH_MAX,
  NONCE_BYTES,
  PROOF_BYTES,
  PROTOCOL_VERSION,
  RESUME_TOKEN_BYTES,
  messageShapes,
  type ControlMessageType,
  type HelloMessage,
  type Message,
  type MessageType,
  type WelcomeMessage,
} from './messages.js';
import type { FieldDims } from './field-dims.js';
import { formatIssue } from '../scenario/validate-scenario.js';
import { FrameElements } from './codec.js';
import { validateRoundFrame } from './validate-round-frame.js';

/** What the receiver expects, from its own state. A null member is not checked. */
export interface ValidationContext {
  limits: ProtocolLimits;
  /** types acceptable now, e.g. ['hello'] before the handshake, ['ups', 'heartbeat', 'error'] after */
  expectedTypes: readonly MessageType[];
  /** the round a round frame must carry (a worker, which cannot know the next round, passes null) */
  expectedRound: number | null;
  /** the exchange a round frame must carry; null: any exchange named in fieldDims */
  expectedExchange: string | null;
  /** client ids a round frame's entries may name: the worker's assignments, on either end */
  ownedClientIds: ReadonlySet<number> | null;
  /**
   * the exact fields, with dimensions, of each exchange's downs (on a worker) or ups (on the
   * server), the exchanges in the method's order: a round frame names its exchange by its index here
   */
  fieldDims: FieldDims | null;
  /** the shared key and the nonce this connection's challenge carried, to check a hello */
  auth: { key: string | Uint8Array; nonce: Uint8Array } | null;
}

function formatPath(type: string, path: readonly PropertyKey[]): string {
  let out = type;
  for (const key of path) out += typeof key === 'number' ? `[${key}]` : `.${String(key)}`;
  return out;
}

function valueAt(raw: unknown, path: readonly PropertyKey[]): unknown {
  let value = raw;
  for (const key of path) {
    if (value === null || typeof value !== 'object' || !Object.hasOwn(value, key)) return undefined;
    value = (value as Record<PropertyKey, unknown>)[key];
  }
  return value;
}

const SCENARIO_PATH = ['plan', 'scenario'] as const;

/**
 * One line for one issue. A welcome's scenario is described as a scenario file's problem is
 * (what was expected, what came), since it is the same schema.
 */
function describeIssue(
  issue: z.core.$ZodIssue,
  raw: Record<string, unknown>,
  type: string,
): string {
  if (type === 'welcome' && SCENARIO_PATH.every((key, i) => issue.path[i] === key)) {
    const { fieldPath, message } = formatIssue(
      { ...issue, path: issue.path.slice(SCENARIO_PATH.length) },
      valueAt(raw, SCENARIO_PATH),
    );
    return `${formatPath(type, SCENARIO_PATH)}${fieldPath === '' ? '' : `.${fieldPath}`}: ${message}`;
  }
  return `${formatPath(type, issue.path)}: ${issue.message}`;
}

function parseShape<T>(schema: z.ZodType<T>, raw: Record<string, unknown>, type: string): T {
  const result = schema.safeParse(raw);
  if (result.success) return result.data;
  const issue = result.error.issues[0];
  const value = valueAt(raw, issue.path);
  const code = typeof value === 'number' && !Number.isFinite(value) ? 'E_NOT_FINITE' : 'E_TYPE';
  throw new ProtocolError(code, describeIssue(issue, raw, type));
}

// Control characters would let a name forge log lines or break metric labels.
const CONTROL_CHARACTER = /\p{Cc}/u;

function checkHello(message: HelloMessage, context: ValidationContext): void {
  const { workerName, capacity, proof, resume } = message;
  const { limits, auth } = context;
  if (workerName.length === 0 || CONTROL_CHARACTER.test(workerName)) {
    throw new ProtocolError('E_TYPE', 'hello.workerName: must be non-empty and printable');
  }
  if (workerName.length > limits.maxWorkerNameLength) {
    throw new ProtocolError(
      'E_SIZE',
      `hello.workerName: ${workerName.length} characters, at most ${limits.maxWorkerNameLength}`,
    );
  }
  if (capacity > limits.maxClientsPerWorker) {
    throw new ProtocolError(
      'E_SIZE',
      `hello.capacity: ${capacity}, at most ${limits.maxClientsPerWorker}`,
    );
  }
  if (proof.length !== PROOF_BYTES) {
    throw new ProtocolError(
      'E_TYPE',
      `hello.proof: ${PROOF_BYTES} bytes expected, got ${proof.length}`,
    );
  }
  // Whether the resume token names a session it may resume is the coordinator's to say (E_AUTH there).
  if (resume !== undefined && resume.length !== RESUME_TOKEN_BYTES) {
    throw new ProtocolError(
      'E_TYPE',
      `hello.resume: ${RESUME_TOKEN_BYTES} bytes expected, got ${resume.length}`,
    );
  }
  if (auth !== null && !verifyProof(auth.key, auth.nonce, proof)) {
    throw new ProtocolError(
      'E_AUTH',
      "hello.proof: does not answer this connection's challenge under the shared key",
    );
  }
}

function checkWelcome(message: WelcomeMessage, limits: ProtocolLimits): void {
  const { assignments, resumeToken, plan } = message;
  if (resumeToken !== undefined && resumeToken.length !== RESUME_TOKEN_BYTES) {
    throw new ProtocolError(
      'E_TYPE',
      `welcome.resumeToken: ${RESUME_TOKEN_BYTES} bytes expected, got ${resumeToken.length}`,
    );
  }
  if (assignments.length > limits.maxClientsPerWorker) {
    throw new ProtocolError(
      'E_SIZE',
      `welcome.assignments: ${assignments.length} clients, at most ${limits.maxClientsPerWorker}`,
    );
  }
  for (let i = 1; i < assignments.length; i++) {
    if (assignments[i] <= assignments[i - 1]) {
      throw new ProtocolError(
        'E_TYPE',
        `welcome.assignments[${i}]: client ids must be strictly increasing`,
      );
    }
  }
  const clientCount = plan.scenario.clients.count;
  const beyond = assignments.findIndex((id) => id >= clientCount);
  if (beyond >= 0) {
    throw new ProtocolError(
      'E_CLIENT',
      `welcome.assignments[${beyond}]: client ${assignments[beyond]}, the plan has clients 0 to ${clientCount - 1}`,
    );
  }
}

function checkVersion(raw: Record<string, unknown>, type: string): void {
  // Before the shape: a peer of another version may send another shape, and should hear why.
  const version = raw.protocolVersion;
  if (typeof version === 'number' && version !== PROTOCOL_VERSION) {
    throw new ProtocolError(
      'E_VERSION',
      `${type}.protocolVersion: this end speaks ${PROTOCOL_VERSION}, the peer ${version}`,
    );
  }
}

/** A peer's value for an error text, cut short: the text goes back to the peer and into logs. */
function quote(value: unknown): string {
  const text = typeof value === 'string' ? JSON.stringify(value) : String(value);
  return text.length > NAME_LENGTH_MAX ? `${text.slice(0, NAME_LENGTH_MAX)}...` : text;
}

function isControlMessageType(value: unknown): value is ControlMessageType {
  return (
    typeof value === 'string' &&
    value !== 'downs' &&
    value !== 'ups' &&
    (MESSAGE_TYPES as readonly string[]).includes(value)
  );
}

/** Plain data (from decodeMessage) -> a message this receiver may use now. Throws ProtocolError. */
export function validateMessage(raw: unknown, context: ValidationContext): Message {
  if (raw instanceof FrameElements) return validateRoundFrame(raw, context);
  if (raw === null || typeof raw !== 'object' || Array.isArray(raw) || raw instanceof Uint8Array) {
    throw new ProtocolError('E_TYPE', 'message: expected a map with a "type"');
  }
  const record = raw as Record<string, unknown>;
  const type = record.type;
  if (!isControlMessageType(type)) {
    throw new ProtocolError('E_TYPE', `type: unknown message type ${quote(type)}`);
  }
  if (!context.expectedTypes.includes(type)) {
    throw new ProtocolError(
      'E_TYPE',
      `type: "${type}" is not expected now (expected ${context.expectedTypes.join(', ')})`,
    );
  }
  switch (type) {
    case 'challenge': {
      checkVersion(record, type);
      const message = parseShape(messageShapes.challenge, record, type);
      if (message.nonce.length !== NONCE_BYTES) {
        throw new ProtocolError(
          'E_TYPE',
          `challenge.nonce: ${NONCE_BYTES} bytes expected, got ${message.nonce.length}`,
        );
      }
      return message;
    }
    case 'hello': {
      checkVersion(record, type);
      const message = parseShape(messageShapes.hello, record, type);
      checkHello(message, context);
      return message;
    }
    case 'welcome': {
      const message = parseShape(messageShapes.welcome, record, type);
      checkWelcome(message, context.limits);
      return message;
    }
    case 'error': {
      const message = parseShape(messageShapes.error, record, type);
      if (message.message.length > context.limits.maxErrorMessageLength) {
        throw new ProtocolError(
          'E_SIZE',
          `error.message: ${message.message.length} characters, at most ${context.limits.maxErrorMessageLength}`,
        );
      }
      return message;
    }
    case 'ready':
      return parseShape(messageShapes.ready, record, type);
    case 'heartbeat':
      return parseShape(messageShapes.heartbeat, record, type);
    case 'checkpoint':
      return parseShape(messageShapes.checkpoint, record, type);
    case 'state': {
      const message = parseShape(messageShapes.state, record, type);
      if (context.expectedRound !== null && message.round !== context.expectedRound) {
        throw new ProtocolError(
          'E_ROUND',
          `state.round: expected round ${context.expectedRound}, got ${message.round}`,
        );
      }
      if (context.ownedClientIds !== null && !context.ownedClientIds.has(message.clientId)) {
        throw new ProtocolError(
          'E_CLIENT',
          `state.clientId: client ${message.clientId} is not hosted by this worker`,
        );
      }
      if (message.vectors.byteLength % 8 !== 0) {
        throw new ProtocolError(
          'E_DIMENSION',
          `state.vectors: ${message.vectors.byteLength} bytes, not a whole number of float64 values`,
        );
      }
      return message;
    }
    case 'done':
      return parseShape(messageShapes.done, record, type);
  }
}
