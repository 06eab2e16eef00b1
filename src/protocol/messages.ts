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
//   worker -> server  ready       its clients' data is built: the coordinator starts the rounds
//                                 (and their wall clock) once every welcomed worker said so, so
//                                 that building data counts as start-up, not as the first round
//   then per round, per exchange, one frame per worker each way:
//   server -> worker  downs       for every hosted client taking part: tau_i, eta_i and its own
//                                 vectors; the vectors every client of the exchange receives
//                                 alike (the model, a control variate, a gradient broadcast)
//                                 once, as the frame's common section; the deadline once
//   worker -> server  ups         the ups of one or more of its clients: vectors and timings, or
//                                 word that a client's update was not finite (it diverged) in
//                                 place of its vectors
//   either way        heartbeat, error
//   server -> worker  done
//
// Checkpoints: after a round the coordinator keeps (checkpoint), it asks every worker for its
// clients' states, and each worker answers with one state message per client, taken after the
// client's work of that round. A coordinator resumed from a checkpoint welcomes its workers
// afresh and then sends each its clients' states (state, server -> worker), which the worker
// restores before any downs.
//   server -> worker  checkpoint  the round whose end the states must show
//   worker -> server  state       one client's state as of that round
//   server -> worker  state       (resumed run) the state a client starts from
//
// A worker whose connection drops mid-run reconnects and answers the new challenge with a hello
// that also carries its welcome's resume token; the coordinator, if it still holds that worker's
// session (within its grace period), welcomes it again with the same clients.
//
// Why one frame per worker, not one message per client: at a thousand clients a round is a
// thousand small messages each way, and each paid a frame, a decode, a validation and a name for
// every key and field; the broadcast, identical for every client, was encoded and sent once per
// client. A worker frame pays the envelope once, carries the broadcast once (encoded once per
// exchange, its bytes reused in every worker's frame: round-frame-encode.ts) and names
// exchanges and fields by their index in the plan, which both ends know from the welcome
// (round-frame-layout.ts). What made per-client messages attractive stays true per entry: each
// entry holds its client's own replicas' differences and tau_i; the worker delays each client
// by that client's link model after the frame arrives and sends each up as soon as it is ready
// (wall clock: ups ready in the same event-loop turn share a frame, none waits for another;
// virtual clock: one frame once the worker's clients of the exchange are done); and bytes stay
// per client: the ledger (server/byte-ledger.ts) gives each client its entry's bytes plus an
// even share of the frame's common bytes, so that per-client sums equal the frame totals.
//
// Control messages (everything but downs and ups) are MessagePack maps keyed by name, as
// readable as before; round frames are MessagePack arrays (round-frame-layout.ts) whose layout
// carries its own version number.

import { z } from 'zod';
import { PROTOCOL_ERROR_CODES } from './errors.js';
import { protocolLimitsSchema } from './limits.js';
import { wirePlanSchema } from './wire-plan.js';
import { bytesShape, type WireVector } from './wire-vector.js';

/** Bumped on any change to a message's shape or meaning; peers must match exactly. */
export const PROTOCOL_VERSION = 5;

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
  'ready',
  'downs',
  'ups',
  'heartbeat',
  'error',
  'done',
  'checkpoint',
  'state',
] as const;
export type MessageType = (typeof MESSAGE_TYPES)[number];
/** The messages that travel as MessagePack maps keyed by name. */
export type ControlMessageType = Exclude<MessageType, 'downs' | 'ups'>;

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

/** Named vectors of one message, by field name (as the method names them). */
export type WireFields = Record<string, WireVector>;

/** One client's part of a downs frame. */
export interface DownEntry {
  clientId: number;
  /** tau_i for this exchange, decided by the timing model before the client starts */
  localSteps: number;
  /** eta_i after the step-size policy */
  stepSize: number;
  /** the client's own vectors: those not in the frame's common section */
  fields: WireFields;
}

/** What the coordinator sends a worker in one exchange (round-frame-layout.ts has the bytes). */
export interface DownsFrame {
  type: 'downs';
  /** 0-based round number */
  round: number;
  /** the method's exchange name, e.g. 'local', or 'gradient' then 'local' for FedLin */
  exchange: string;
  /** time a client has from receipt until its up is due; null when the round waits for all */
  deadlineSeconds: number | null;
  /** the vectors every entry receives alike, sent once */
  common: WireFields;
  /** ascending client id, each client once */
  entries: DownEntry[];
}

/** One client's up inside an ups frame. */
export interface UpEntry {
  clientId: number;
  /** empty when updateNotFinite is set */
  fields: WireFields;
  /**
   * The client's update was not finite, so it has no vectors to send (vectors on the wire are
   * finite, always). The coordinator's round walk judges this as the in-process engine judges
   * its own client's non-finite update: the run diverged. Absent otherwise.
   */
  updateNotFinite?: true;
  /** local steps actually taken (0 for an exchange without local work) */
  localSteps: number;
  /** time spent computing, as the speed model accounts it */
  computeSeconds: number;
  /** time spent waiting (a straggler's idle time in wall mode, or the model's) */
  waitSeconds: number;
  /** time spent on the link model for this client's traffic of the exchange */
  transferSeconds: number;
}

/** What a worker sends for one or more of its clients in one exchange. */
export interface UpsFrame {
  type: 'ups';
  round: number;
  exchange: string;
  /** each client once */
  entries: UpEntry[];
  /**
   * Set on a frame as received: the encoded bytes of each entry, in entry order (the rest of
   * the frame is its envelope, shared by its entries).
   */
  entryBytes?: number[];
}

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
  ready: z.strictObject({ type: z.literal('ready') }),
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
} satisfies Record<ControlMessageType, z.ZodType>;

export type ChallengeMessage = z.infer<typeof messageShapes.challenge>;
export type HelloMessage = z.infer<typeof messageShapes.hello>;
export type WelcomeMessage = z.infer<typeof messageShapes.welcome>;
export type ReadyMessage = z.infer<typeof messageShapes.ready>;
export type HeartbeatMessage = z.infer<typeof messageShapes.heartbeat>;
export type ErrorMessage = z.infer<typeof messageShapes.error>;
export type DoneMessage = z.infer<typeof messageShapes.done>;

/** A message that travels as a MessagePack map keyed by name (encodeMessage). */
export type ControlMessage = Exclude<Message, DownsFrame | UpsFrame>;

export type CheckpointMessage = z.infer<typeof messageShapes.checkpoint>;
export type StateMessage = z.infer<typeof messageShapes.state>;

export type Message =
  | ChallengeMessage
  | HelloMessage
  | WelcomeMessage
  | DownsFrame
  | UpsFrame
  | ReadyMessage
  | HeartbeatMessage
  | ErrorMessage
  | DoneMessage
  | CheckpointMessage
  | StateMessage;
