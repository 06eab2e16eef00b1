// The coordinator's transport for the round walk (src/engine/round-walk.ts). The walk decides
// what a round is: participants, tau_i and eta_i, the downs, timing and drops, aggregation in
// ascending client id, divergence and the records, exactly as in the in-process engine, which is
// why a virtual-clock run ends on the engine's model bit for bit. This file carries it over the
// WebSocket sessions: a downs frame per worker through its session, an ExchangeWait for the
// ups under the clock's closing rules (wall clock: fastest-k closes at the first k arrivals, a
// deadline at its time), the byte ledger, and the workers that leave, come back or go silent.

import type { RunPlan } from '../src/engine/run-plan.js';
import { ServerRuntime } from '../src/engine/server-runtime.js';
import type { RunState } from '../src/engine/run-state.js';
import type { EncodedFields } from '../src/engine/client-runtime.js';
import type { ClientAssignment } from '../src/engine/round-schedule.js';
import type { ClientRoundRecord, RecordSink, RoundRecord } from '../src/engine/round-record.js';
import type { RoundEvaluation } from '../src/engine/evaluate.js';
import { walkRun, walkSetup, type WalkedRun } from '../src/engine/round-walk.js';
import {
  driveAsync,
  type ClientReturn,
  type ExchangeDown,
  type ExchangeOrder,
  type ExchangeReply,
  type RoundTransport,
  type WalkPoint,
} from '../src/engine/walk-transport.js';
import { payloadBytes } from '../src/compress/payload-bytes.js';
import { policyForUpdates } from '../src/timing/round-policy.js';
import { downlinkSecondsFor, uplinkSecondsFor } from '../src/timing/links.js';
import {
  ProtocolError,
  assembleDownsFrame,
  encodeDownEntry,
  encodeDownsPrefix,
  fromWire,
  toWire,
  type UpEntry,
  type UpsFrame,
  type WireFields,
} from '../src/protocol/index.js';
import type { ByteLedger, FrameEntryBytes } from './byte-ledger.js';
import { sharedFields } from './shared-fields.js';
import type { WorkerSession } from './worker-session.js';
import { ExchangeWait, type CloseRule } from './exchange-wait.js';
import { LateUpHold } from './late-up-hold.js';
import type { WorkerRegistry } from './worker-registry.js';
import type { ClientBoard } from './live-view/client-board.js';

export type { StopReason } from '../src/engine/run-summary.js';
import type { StopReason } from '../src/engine/run-summary.js';

export interface RoundDriverOptions {
  plan: RunPlan;
  registry: WorkerRegistry;
  ledger: ByteLedger;
  /** the model after `round` rounds, evaluated by the oracle, with the predicted trajectory's value there */
  evaluate: (x: Float64Array, round: number) => Promise<RoundEvaluation>;
  /** longest wait for one exchange's ups before the missing ones count as lost */
  exchangeTimeoutSeconds: number;
  /** wall-clock deadline: extra time after budget plus transfer before an up is late */
  wallGraceSeconds: number;
  nowMs: () => number;
  /**
   * Resolves once a worker is connected, or none can come back (a disconnected worker resumes or
   * is lost within its grace): a round is not spent while every worker is away.
   */
  untilConnected?: () => Promise<void>;
  onRound?: (record: RoundRecord) => void;
  /** every round with its clients' records, round 0 (the initial evaluation, no clients) first */
  onRoundRecords?: (record: RoundRecord, clients: readonly ClientRoundRecord[]) => void;
  /** keeps what the run needs to go on after `point` (the server's state is `server`'s) */
  checkpoint?: (point: WalkPoint, server: ServerRuntime) => Promise<void>;
  /** go on from this state (a checkpoint's): the server's part is restored here */
  resume?: RunState;
  /** where clients' states are written as they change, for the live view */
  board?: ClientBoard;
  /** ask for a checkpoint after every this many rounds (0 or absent: only when stopped) */
  checkpointEveryRounds?: number;
}

export type RoundsResult = WalkedRun;

interface Owed {
  wait: ExchangeWait;
  assignment: ClientAssignment;
  /** set when the wait closed without this client's up (wall clock: a late up fills in its bytes) */
  record: ClientRoundRecord | null;
}

/** A client's share of the encoded and wire bytes of its downs frame (0 when its worker was away). */
interface SentDown {
  encodedBytes: number;
  wireBytes: number;
}

export class RoundDriver implements RoundTransport<'async'> {
  private readonly options: RoundDriverOptions;
  private readonly plan: RunPlan;
  private readonly server: ServerRuntime;
  private readonly owed = new Map<number, Owed>();
  /** per client, an up still owed to a closed wait when a newer down replaced it (it may yet arrive, late) */
  private readonly superseded = new Map<number, Owed>();
  private readonly wall: boolean;
  private current: ExchangeWait | null = null;
  private stopRequested = false;
  /** the run's records held for late ups (null before the run, or with no records) */
  private hold: LateUpHold | null = null;
  /** the round in progress (0 before the first) */
  round = 0;

  constructor(options: RoundDriverOptions) {
    this.options = options;
    this.plan = options.plan;
    this.server = new ServerRuntime(options.plan);
    if (options.resume !== undefined) {
      this.server.restore(options.resume.server);
      this.round = options.resume.round;
    }
    this.wall = options.plan.scenario.timing.clock === 'wall';
  }

  /**
   * An ups frame from a worker, already validated against the plan's shapes and the worker's
   * clients. Every entry is checked against what its client owes before any is used: throws
   * ProtocolError E_ROUND when a client owes no up for that round and exchange, E_TYPE when it
   * took more steps than it was assigned.
   */
  acceptUps(frame: UpsFrame, encodedBytes: number, wireBytes: number, streamSeconds: number): void {
    const owedOf = frame.entries.map((entry) => this.owedEntry(frame, entry));
    const decoded = frame.entries.map((entry) => {
      const encodedUp: EncodedFields = {};
      const fieldPayloadBytes: Record<string, number> = {};
      let payload = 0;
      for (const [name, wv] of Object.entries(entry.fields)) {
        encodedUp[name] = fromWire(wv, `ups.fields.${name}`);
        fieldPayloadBytes[name] = payloadBytes(encodedUp[name]);
        payload += fieldPayloadBytes[name];
      }
      return { encodedUp, fieldPayloadBytes, payload };
    });
    const entryBytes = frame.entryBytes ?? [];
    const shares = this.options.ledger.recordRoundFrame(
      'up',
      frame.entries.map((entry, i) => ({
        clientId: entry.clientId,
        entryBytes: entryBytes[i] ?? 0,
        fieldPayloadBytes: decoded[i].fieldPayloadBytes,
      })),
      encodedBytes,
      wireBytes,
    );
    const arrivedMs = this.options.nowMs();
    frame.entries.forEach((entry, i) => {
      const share = shares.get(entry.clientId)!;
      this.applyUp(
        frame,
        entry,
        owedOf[i],
        decoded[i],
        share.encodedBytes,
        share.wireBytes,
        streamSeconds,
        arrivedMs,
      );
    });
  }

  /** What the entry answers; throws when its client owes no such up or overstates its steps. */
  private owedEntry(frame: UpsFrame, entry: UpEntry): Owed {
    const owed = this.owedFor(entry.clientId, frame.round, frame.exchange);
    if (owed === null) {
      const current = this.owed.get(entry.clientId);
      const expected =
        current === undefined
          ? 'none'
          : `round ${current.wait.round}, exchange "${current.wait.exchange}"`;
      throw new ProtocolError(
        'E_ROUND',
        `ups: client ${entry.clientId} owes no up for round ${frame.round}, exchange "${frame.exchange}" (owed: ${expected})`,
      );
    }
    if (entry.localSteps > owed.assignment.localSteps) {
      throw new ProtocolError(
        'E_TYPE',
        `ups.localSteps: client ${entry.clientId} took ${entry.localSteps} steps, but ${owed.assignment.localSteps} were assigned`,
      );
    }
    return owed;
  }

  private applyUp(
    frame: UpsFrame,
    entry: UpEntry,
    owed: Owed,
    decoded: {
      encodedUp: EncodedFields;
      fieldPayloadBytes: Record<string, number>;
      payload: number;
    },
    encodedBytes: number,
    wireBytes: number,
    streamSeconds: number,
    arrivedMs: number,
  ): void {
    if (this.owed.get(entry.clientId) === owed) this.owed.delete(entry.clientId);
    else this.superseded.delete(entry.clientId);
    if (owed.wait.closed) {
      // A late up (wall clock): recorded with the bytes it cost, never aggregated.
      if (owed.record !== null) {
        owed.record.bytes.payload.up = decoded.payload;
        owed.record.bytes.encoded = {
          up: encodedBytes,
          down: owed.record.bytes.encoded?.down ?? 0,
        };
        owed.record.bytes.wire = { up: wireBytes, down: owed.record.bytes.wire?.down ?? 0 };
        owed.record.computeSeconds = entry.computeSeconds;
        owed.record.transferSeconds = entry.transferSeconds;
        owed.record.upStreamSeconds = streamSeconds;
      }
      return;
    }
    this.options.board?.set(entry.clientId, 'waiting');
    owed.wait.deliver(entry.clientId, {
      round: frame.round,
      up: entry,
      encodedUp: decoded.encodedUp,
      fieldPayloadBytes: decoded.fieldPayloadBytes,
      payloadBytes: decoded.payload,
      encodedBytes,
      wireBytes,
      streamSeconds,
      arrivedMs,
    });
  }

  /** What an up answers: the client's current owed up, or the one its newest down superseded. */
  private owedFor(clientId: number, round: number, exchange: string): Owed | null {
    for (const owed of [this.owed.get(clientId), this.superseded.get(clientId)]) {
      if (owed !== undefined && owed.wait.round === round && owed.wait.exchange === exchange)
        return owed;
    }
    return null;
  }

  /** The round and exchange whose ups are awaited now, or null between exchanges. */
  expectation(): { round: number; exchange: string } | null {
    return this.current === null
      ? null
      : { round: this.current.round, exchange: this.current.exchange };
  }

  /**
   * Clients of a lost or disconnected worker leave the exchange in progress (dropped there) and
   * take no part until their worker resumes, if ever.
   */
  clientsLost(clientIds: readonly number[]): void {
    for (const id of clientIds) {
      const owed = this.owed.get(id);
      this.owed.delete(id);
      this.superseded.delete(id);
      owed?.wait.lose(id);
    }
  }

  /**
   * Clients of a resumed worker take part again from the next exchange that starts. Their
   * replicas start afresh on both ends: a down lost with the old connection advanced this end's
   * replica but not the client's (the worker resets its own on the same welcome).
   */
  clientsResumed(clientIds: readonly number[]): void {
    for (const id of clientIds) this.server.resetReplicas(id);
  }

  /**
   * Ends the run after the round in progress, which finishes as it would have: the checkpoint
   * taken then lets the run go on exactly as if it had never stopped.
   */
  requestStop(): void {
    this.stopRequested = true;
  }

  /** Runs every round, its records into `records` as they happen; resolves when the run stops. */
  async run(wallSecondsNow: () => number, records: RecordSink | null): Promise<RoundsResult> {
    const hold = records && new LateUpHold(records, () => this.awaitingLateUps());
    this.hold = hold;
    const onRound = (record: RoundRecord, clients: readonly ClientRoundRecord[]): void => {
      hold?.add(record, clients);
      this.options.onRoundRecords?.(record, clients);
      this.options.onRound?.(record);
    };
    const result = await driveAsync(
      walkRun({
        ...walkSetup(this.plan, this.server, ['encoded', 'wire']),
        wallSeconds: wallSecondsNow,
        onRound,
        ...(this.options.resume === undefined ? {} : { resumeAfter: this.options.resume }),
        checkpointEveryRounds: this.options.checkpointEveryRounds ?? 0,
        // Virtual clock only: on the wall clock the evaluation would share the cores with the
        // clients whose seconds are measured, and records would lag an exchange behind.
        overlapEvaluation: this.plan.scenario.timing.clock === 'virtual',
      }),
      this,
    );
    hold?.flush();
    return result;
  }

  /** The client records a late up may still fill in (keepForLateUps), until it comes or its client is lost. */
  private awaitingLateUps(): Set<ClientRoundRecord> {
    const awaited = new Set<ClientRoundRecord>();
    for (const owed of [...this.owed.values(), ...this.superseded.values()])
      if (owed.record !== null) awaited.add(owed.record);
    return awaited;
  }

  async openRound(round: number): Promise<StopReason | null> {
    await this.options.untilConnected?.();
    if (this.stopRequested) return 'stopped';
    this.round = round;
    return null;
  }

  /**
   * Every client still in the run. A client still owing the up of a closed wait (too slow for
   * fastest-k, past a deadline) takes part too: its new down supersedes the discarded work, so
   * that it works from the current model as in the engine, and the worker withholds the
   * superseded up. A client whose worker is disconnected takes part as well and is missing at
   * once (sendDowns), so that the round's records show it missing rather than absent.
   */
  members(_round: number, _exchange: string, candidates: readonly number[]): number[] {
    return candidates.filter((id) => this.options.registry.isClientInRun(id));
  }

  async exchange(order: ExchangeOrder): Promise<ExchangeReply> {
    const assignments = order.downs.map((d) => d.assignment);
    const clientIds = assignments.map((a) => a.clientId);
    const wait = new ExchangeWait(
      order.round,
      order.exchange,
      clientIds,
      this.closeRuleFor(assignments, this.options.nowMs()),
      this.options.exchangeTimeoutSeconds,
      this.options.nowMs,
    );
    this.current = wait;
    this.options.board?.exchangeStarted(clientIds);
    const sent = this.sendDowns(order, wait);
    await wait.done;
    this.current = null;
    const board = this.options.board;
    if (board !== undefined)
      for (const id of clientIds) if (!wait.arrivals.has(id)) board.set(id, 'dropped');
    return this.replyOf(order, wait, sent);
  }

  /** The last round is this one once no worker is left, or a stop was asked for. */
  closeRound(): StopReason | null {
    const registry = this.options.registry;
    if (registry.activeSessions().length === 0 && registry.disconnectedSessions().length === 0)
      return 'workers-lost';
    return this.stopRequested ? 'stopped' : null;
  }

  evaluate(model: Float64Array, round: number): Promise<RoundEvaluation> {
    return this.options.evaluate(model, round);
  }

  async checkpoint(point: WalkPoint): Promise<void> {
    // The records up to the checkpoint's round must be in the files when their offsets are
    // taken: rounds held for a late up (wall clock) go out now, as they are.
    this.hold?.flush();
    await this.options.checkpoint?.(point, this.server);
  }

  private closeRuleFor(assignments: readonly ClientAssignment[], sentMs: number): CloseRule {
    if (!this.wall) return { kind: 'all' };
    const policy = policyForUpdates(this.plan.scenario.timing.policy, assignments.length);
    if (policy.kind === 'fastest-k') return { kind: 'first-k', k: policy.k };
    if (policy.kind === 'deadline') {
      const denseBytes = this.plan.dim * 8 * 4;
      let transferSeconds = 0;
      for (const a of assignments) {
        const link = this.plan.links[a.clientId];
        transferSeconds = Math.max(
          transferSeconds,
          downlinkSecondsFor(link, denseBytes) + uplinkSecondsFor(link, denseBytes),
        );
      }
      return {
        kind: 'until',
        closeAtMs:
          sentMs + 1000 * (policy.budgetSeconds + transferSeconds + this.options.wallGraceSeconds),
      };
    }
    return { kind: 'all' };
  }

  /**
   * One downs frame per worker. The fields every client of the exchange receives alike go once,
   * in the common section, encoded once for all workers' frames; each entry holds its client's
   * own. Wall clock as virtual: the frame goes at once, and each client's downlink delay is its
   * own, applied on the worker (client/link.ts) when the frame arrives.
   */
  private sendDowns(order: ExchangeOrder, wait: ExchangeWait): Map<number, SentDown> {
    const { round, exchange } = order;
    const policy = this.plan.scenario.timing.policy;
    const deadlineSeconds = policy.kind === 'deadline' ? policy.budgetSeconds : null;
    const sent = new Map<number, SentDown>();
    if (order.downs.length === 0) return sent;
    const fieldNames = Object.keys(order.downs[0].encodedDown);
    const commonNames = sharedFields(order.downs);
    const common: WireFields = {};
    for (const name of commonNames)
      common[name] = toWire(order.downs[0].encodedDown[name], `downs.common.${name}`);
    const prefix = encodeDownsPrefix(
      round,
      this.server.method.exchanges.indexOf(exchange),
      deadlineSeconds,
      fieldNames,
      common,
    );
    const byWorker = new Map<WorkerSession, ExchangeDown[]>();
    for (const down of order.downs) {
      const session = this.options.registry.hostOfClient(down.assignment.clientId);
      if (session === null) {
        wait.lose(down.assignment.clientId);
        continue;
      }
      const downs = byWorker.get(session) ?? [];
      downs.push(down);
      byWorker.set(session, downs);
    }
    for (const [session, downs] of byWorker) {
      const entries: FrameEntryBytes[] = [];
      const pieces: Uint8Array[] = [];
      for (const { assignment: a, encodedDown } of downs) {
        const fields: WireFields = {};
        const fieldPayloadBytes: Record<string, number> = {};
        for (const [name, cv] of Object.entries(encodedDown)) {
          fieldPayloadBytes[name] = payloadBytes(cv);
          if (!commonNames.has(name)) fields[name] = toWire(cv, `downs.fields.${name}`);
        }
        const piece = encodeDownEntry(
          { clientId: a.clientId, localSteps: a.localSteps, stepSize: a.stepSize, fields },
          prefix,
        );
        pieces.push(piece);
        entries.push({ clientId: a.clientId, entryBytes: piece.byteLength, fieldPayloadBytes });
        const earlier = this.owed.get(a.clientId);
        if (earlier !== undefined) this.superseded.set(a.clientId, earlier);
        this.owed.set(a.clientId, { wait, assignment: a, record: null });
      }
      const board = this.options.board;
      const bytes = session.sendDowns(
        assembleDownsFrame(prefix, pieces),
        pieces.length,
        board && (() => board.written(sentIds(downs))),
      );
      const shares = this.options.ledger.recordRoundFrame(
        'down',
        entries,
        bytes.encodedBytes,
        bytes.wireBytes,
      );
      for (const [clientId, share] of shares) sent.set(clientId, share);
    }
    return sent;
  }

  /** What came back in a closed wait, with the bytes each way at the codec and socket layers. */
  private replyOf(
    order: ExchangeOrder,
    wait: ExchangeWait,
    sent: ReadonlyMap<number, SentDown>,
  ): ExchangeReply {
    const returns = new Map<number, ClientReturn>();
    for (const { assignment: a } of order.downs) {
      const down = sent.get(a.clientId) ?? { encodedBytes: 0, wireBytes: 0 };
      const arrival = wait.arrivals.get(a.clientId);
      const layers = {
        encoded: { up: arrival?.encodedBytes ?? 0, down: down.encodedBytes },
        wire: { up: arrival?.wireBytes ?? 0, down: down.wireBytes },
      };
      if (arrival === undefined) {
        returns.set(a.clientId, { kind: 'missing', layers });
        continue;
      }
      const m = arrival.up;
      if (m.updateNotFinite === true) {
        // Data for the walk to judge, as the engine's own client's non-finite update is.
        returns.set(a.clientId, { kind: 'not-finite', layers });
        continue;
      }
      // Wall clock: the seconds are the worker's, plus the idle time until the wait closed.
      const measured = this.wall
        ? {
            computeSeconds: m.computeSeconds,
            transferSeconds: m.transferSeconds,
            waitSeconds: m.waitSeconds + Math.max(0, wait.closedMs - arrival.arrivedMs) / 1000,
            upStreamSeconds: arrival.streamSeconds,
          }
        : undefined;
      returns.set(a.clientId, {
        kind: 'up',
        encodedUp: arrival.encodedUp,
        stepsTaken: m.localSteps,
        layers,
        measured,
      });
    }
    return {
      returns,
      recorded: (records) => this.keepForLateUps(wait, records),
    };
  }

  /** A client that owes this wait's up keeps its record, for a late up's bytes and seconds. */
  private keepForLateUps(wait: ExchangeWait, records: readonly ClientRoundRecord[]): void {
    for (const record of records) {
      const owed = this.owed.get(record.clientId);
      if (owed !== undefined && owed.wait === wait && !wait.arrivals.has(record.clientId))
        owed.record = record;
    }
  }
}

function* sentIds(downs: readonly ExchangeDown[]): Generator<number> {
  for (const down of downs) yield down.assignment.clientId;
}
