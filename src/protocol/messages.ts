// Every message the coordinator and a worker exchange, discriminated by `type`. All messages
// are binary (MessagePack, see codec.ts) and every one that arrives is validated
// (validate.ts) before use.
//
// Conversation:
//   server -> worker  challenge   on connect: a fresh nonce
//   worker -> server  hello       HMAC of the nonce under the shared key (auth.ts), and the
//                                 capacity it offers; the key itself never crosses the wire
//   server -> worker  welcome     client ids to host, the plan, the limits, a resume token;
//                                 or error E_AUTH
//   then per round, per exchange, per participating client:
//   server -> worker  down        that client's vectors, tau_i, eta_i, deadline
//   worker -> server  up          that client's vectors and timings
//   either way        heartbeat, error
//   server -> worker  done
//
// Checkpoints: after a round the coordinator keeps (checkpoint), it asks every worker for its
// clients' states, and each worker answers with one state message per client, taken after the
// client's work of that round. A coordinator resumed from a checkpoint welcomes its workers
// afresh and then sends each its clients' states (state, server -> worker), which the worker
// restores before any down.
//   server -> worker  checkpoint  the round whose end the states must show
//   worker -> server  state       one client's state as of that round
//   server -> worker  state       (resumed run) the state a client starts from
//
// A worker whose connection drops mid-run reconnects and answers the new challenge with a hello
// that also carries its welcome's resume token; the coordinator, if it still holds that worker's
// session (within its grace period), welcomes it again with the same clients.
//
// One down and one up per client, not one per worker: the downlink replicas and tau_i differ
// per client, each client has its own link model (a sender delays each client's message by
// that client's latency and bandwidth), and bytes are counted per client at every layer, which
// a frame shared by several clients could only apportion.

import type { ProtocolErrorCode } from './errors.js';
import type { ProtocolLimits } from './limits.js';
import type { WirePlan } from './wire-plan.js';
import type { WireVector } from './wire-vector.js';

/** Bumped on any change to a message's shape or meaning; peers must match exactly. */
export const PROTOCOL_VERSION = 3;

/** Bytes of the server's challenge nonce (256 bits: never repeats in practice). */
export const NONCE_BYTES = 32;

/** Bytes of an HMAC-SHA256 proof. */
export const PROOF_BYTES = 32;

/** Bytes of a resume token (256 bits: cannot be guessed within a grace period). */
export const RESUME_TOKEN_BYTES = 32;

/**
 * Exchange and field names: ASCII identifiers, so that they are safe as metric labels and a
 * name costs one byte a character on the wire.
 */
export const NAME_PATTERN = /^[A-Za-z][A-Za-z0-9_.-]*$/;
export const NAME_LENGTH_MAX = 64;

export const MESSAGE_TYPES = [
  'challenge',
  'hello',
  'welcome',
  'down',
  'up',
  'heartbeat',
  'error',
  'done',
  'checkpoint',
  'state',
] as const;
export type MessageType = (typeof MESSAGE_TYPES)[number];

export const DONE_REASONS = [
  /** every planned round ran */
  'rounds-complete',
  /** f(x) - f* reached the scenario's target */
  'target-reached',
  /** the operator stopped the run */
  'stopped',
  /** the run could not go on (a fault the coordinator logged) */
  'failed',
] as const;
export type DoneReason = (typeof DONE_REASONS)[number];

/** Named vectors of one message, by field name (as the method names them). */
export type WireFields = Record<string, WireVector>;

export interface ChallengeMessage {
  type: 'challenge';
  protocolVersion: number;
  /** NONCE_BYTES random bytes, fresh for every connection */
  nonce: Uint8Array;
}

export interface HelloMessage {
  type: 'hello';
  protocolVersion: number;
  /** for logs and metric labels; printable, at most limits.maxWorkerNameLength characters */
  workerName: string;
  /** capacity: how many clients this worker offers to host */
  capacity: number;
  /** HMAC-SHA256(shared key, challenge nonce), PROOF_BYTES bytes */
  proof: Uint8Array;
  /** present when resuming a dropped session: the resume token of its welcome, RESUME_TOKEN_BYTES bytes */
  resume?: Uint8Array;
}

export interface WelcomeMessage {
  type: 'welcome';
  /** ids of the clients this worker hosts, strictly increasing */
  assignments: number[];
  /** the resolved scenario, the method's numbers and the dimension (wire-plan.ts) */
  plan: WirePlan;
  /** the limits both ends apply from now on (frame size from the plan, heartbeat timing) */
  limits: ProtocolLimits;
  /**
   * RESUME_TOKEN_BYTES random bytes naming this worker's session, for a hello after a dropped
   * connection; absent when the coordinator does not let workers resume
   */
  resumeToken?: Uint8Array;
}

export interface DownMessage {
  type: 'down';
  /** 0-based round number */
  round: number;
  /** the method's exchange name, e.g. 'local', or 'gradient' then 'local' for FedLin */
  exchange: string;
  clientId: number;
  /** tau_i for this exchange, decided by the timing model before the client starts */
  localSteps: number;
  /** eta_i after the step-size policy */
  stepSize: number;
  fields: WireFields;
  /** time the client has from receipt until its up is due; null when the round waits for all */
  deadlineSeconds: number | null;
}

export interface UpMessage {
  type: 'up';
  round: number;
  exchange: string;
  clientId: number;
  fields: WireFields;
  /** local steps actually taken (0 for an exchange without local work) */
  localSteps: number;
  /** time spent computing, as the speed model accounts it */
  computeSeconds: number;
  /** time spent waiting (a straggler's idle time in wall mode, or the model's) */
  waitSeconds: number;
  /** time spent on the link model for this client's traffic of the exchange */
  transferSeconds: number;
}

export interface HeartbeatMessage {
  type: 'heartbeat';
  /** sender's wall clock, for round-trip estimates; never used by results */
  sentAtMs: number;
}

export interface ErrorMessage {
  type: 'error';
  code: ProtocolErrorCode;
  /** at most limits.maxErrorMessageLength characters */
  message: string;
}

export interface DoneMessage {
  type: 'done';
  reason: DoneReason;
}

export interface CheckpointMessage {
  type: 'checkpoint';
  /** the round just finished: each hosted client's state must show its work up to this round */
  round: number;
}

export interface StateMessage {
  type: 'state';
  /** the round the state is the end of */
  round: number;
  clientId: number;
  /**
   * the client's state as a JSON text: {"tree": the state tree (src/base/state-tree.ts),
   * "lengths": the length of each vector}
   */
  tree: string;
  /** the tree's vectors one after another, little-endian float64 */
  vectors: Uint8Array;
}

export type Message =
  | ChallengeMessage
  | HelloMessage
  | WelcomeMessage
  | DownMessage
  | UpMessage
  | HeartbeatMessage
  | ErrorMessage
  | DoneMessage
  | CheckpointMessage
  | StateMessage;
