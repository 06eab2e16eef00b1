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
//   worker -> server  up          that client's vectors and timings, or word that its update
//                                 was not finite (it diverged) in place of the vectors
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

import { z } from 'zod';
import { PROTOCOL_ERROR_CODES } from './errors.js';
import { protocolLimitsSchema } from './limits.js';
import { wirePlanSchema } from './wire-plan.js';
import { bytesShape, wireVectorShape } from './wire-vector.js';

/** Bumped on any change to a message's shape or meaning; peers must match exactly. */
export const PROTOCOL_VERSION = 3;

export { NONCE_BYTES, PROOF_BYTES, RESUME_TOKEN_BYTES } from './secret-lengths.js';

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

// The shapes below are the one definition of every message: validate.ts parses with them, and
// the types are inferred from them. What a shape cannot say (byte lengths, names, limits, the
// receiver's state) validate.ts checks after the shape.

const count = z.number().int().nonnegative();
const seconds = z.number().nonnegative();

const fieldsShape = z.record(z.string(), wireVectorShape);

/** Named vectors of one message, by field name (as the method names them). */
export type WireFields = z.infer<typeof fieldsShape>;

export const messageShapes = {
  challenge: z.strictObject({
    type: z.literal('challenge'),
    protocolVersion: count,
    /** NONCE_BYTES random bytes, fresh for every connection */
    nonce: bytesShape,
  }),
  hello: z.strictObject({
    type: z.literal('hello'),
    protocolVersion: count,
    /** for logs and metric labels; printable, at most limits.maxWorkerNameLength characters */
    workerName: z.string(),
    /** capacity: how many clients this worker offers to host */
    capacity: z.number().int().positive(),
    /** HMAC-SHA256(shared key, challenge nonce), PROOF_BYTES bytes */
    proof: bytesShape,
    /** present when resuming a dropped session: the resume token of its welcome, RESUME_TOKEN_BYTES bytes */
    resume: bytesShape.optional(),
  }),
  welcome: z.strictObject({
    type: z.literal('welcome'),
    /** ids of the clients this worker hosts, strictly increasing */
    assignments: z.array(count),
    /** the resolved scenario, the method's numbers and the dimension (wire-plan.ts) */
    plan: wirePlanSchema,
    /** the limits both ends apply from now on (frame size from the plan, heartbeat timing) */
    limits: protocolLimitsSchema,
    /**
     * RESUME_TOKEN_BYTES random bytes naming this worker's session, for a hello after a dropped
     * connection; absent when the coordinator does not let workers resume
     */
    resumeToken: bytesShape.optional(),
  }),
  down: z.strictObject({
    type: z.literal('down'),
    /** 0-based round number */
    round: count,
    /** the method's exchange name, e.g. 'local', or 'gradient' then 'local' for FedLin */
    exchange: z.string(),
    clientId: count,
    /** tau_i for this exchange, decided by the timing model before the client starts */
    localSteps: z.number().int().positive(),
    /** eta_i after the step-size policy */
    stepSize: z.number().positive(),
    fields: fieldsShape,
    /** time the client has from receipt until its up is due; null when the round waits for all */
    deadlineSeconds: z.number().positive().nullable(),
  }),
  up: z.strictObject({
    type: z.literal('up'),
    round: count,
    exchange: z.string(),
    clientId: count,
    /** empty when updateNotFinite is set */
    fields: fieldsShape,
    /**
     * The client's update was not finite, so it has no vectors to send (vectors on the wire are
     * finite, always). The coordinator's round walk judges this as the in-process engine judges
     * its own client's non-finite update: the run diverged. Absent otherwise.
     */
    updateNotFinite: z.literal(true).optional(),
    /** local steps actually taken (0 for an exchange without local work) */
    localSteps: count,
    /** time spent computing, as the speed model accounts it */
    computeSeconds: seconds,
    /** time spent waiting (a straggler's idle time in wall mode, or the model's) */
    waitSeconds: seconds,
    /** time spent on the link model for this client's traffic of the exchange */
    transferSeconds: seconds,
  }),
  heartbeat: z.strictObject({
    type: z.literal('heartbeat'),
    /** sender's wall clock, for round-trip estimates; never used by results */
    sentAtMs: z.number().nonnegative(),
  }),
  error: z.strictObject({
    type: z.literal('error'),
    code: z.enum(PROTOCOL_ERROR_CODES),
    /** at most limits.maxErrorMessageLength characters */
    message: z.string(),
  }),
  done: z.strictObject({ type: z.literal('done'), reason: z.enum(DONE_REASONS) }),
  checkpoint: z.strictObject({
    type: z.literal('checkpoint'),
    /** the round just finished: each hosted client's state must show its work up to this round */
    round: count,
  }),
  state: z.strictObject({
    type: z.literal('state'),
    /** the round the state is the end of */
    round: count,
    clientId: count,
    /**
     * the client's state as a JSON text: {"tree": the state tree (src/base/state-tree.ts),
     * "lengths": the length of each vector}
     */
    tree: z.string(),
    /** the tree's vectors one after another, little-endian float64 */
    vectors: bytesShape,
  }),
} satisfies Record<MessageType, z.ZodType>;

export type ChallengeMessage = z.infer<typeof messageShapes.challenge>;
export type HelloMessage = z.infer<typeof messageShapes.hello>;
export type WelcomeMessage = z.infer<typeof messageShapes.welcome>;
export type DownMessage = z.infer<typeof messageShapes.down>;
export type UpMessage = z.infer<typeof messageShapes.up>;
export type HeartbeatMessage = z.infer<typeof messageShapes.heartbeat>;
export type ErrorMessage = z.infer<typeof messageShapes.error>;
export type DoneMessage = z.infer<typeof messageShapes.done>;

export type CheckpointMessage = z.infer<typeof messageShapes.checkpoint>;
export type StateMessage = z.infer<typeof messageShapes.state>;

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
