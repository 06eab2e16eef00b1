// The round state machine: the same walk as the in-process engine (runInProcess), over the
// network. Per round: participants; per exchange: broadcast, one down per client (its own
// downlink replica), wait for the ups, decide timing and drops, aggregate in ascending client
// id; then evaluate. With the virtual clock every decision comes from the models, exactly as
// decideRound makes it in the engine, so the final model is the engine's bit for bit. With the
// wall clock, fastest-k counts the first k arrivals and a deadline counts what arrived in time.

import type { RunPlan } from '../src/engine/run-plan.js';
import { ServerRuntime, type EncodedUpload } from '../src/engine/server-runtime.js';
import type { EncodedFields } from '../src/engine/client-runtime.js';
import { assignmentsFor, isLocalWorkExchange, roundParticipants, type ClientAssignment } from '../src/engine/round-schedule.js';
import type { ClientRoundRecord, RoundRecord } from '../src/engine/round-record.js';
import type { Evaluation } from '../src/engine/evaluate.js';
import { encodedPayloadBytes } from '../src/engine/in-process-engine.js';
import { payloadBytes } from '../src/compress/payload-bytes.js';
import { speedModelFor, type SpeedModel } from '../src/timing/round-speed.js';
import { decideRound, type RoundParticipant, type RoundTiming } from '../src/timing/round-policy.js';
import { downlinkSecondsFor, uplinkSecondsFor } from '../src/timing/links.js';
import { VirtualClock } from '../src/timing/virtual-clock.js';
import { ProtocolError, fromWire, toWire, type UpMessage, type WireFields } from '../src/protocol/index.js';
import type { ByteLedger } from './byte-ledger.js';
import { ExchangeWait, type CloseRule } from './exchange-wait.js';
import type { WorkerRegistry } from './worker-registry.js';

export type { StopReason } from '../src/engine/run-summary.js';
import type { StopReason } from '../src/engine/run-summary.js';

export interface RoundDriverOptions {
  plan: RunPlan;
  registry: WorkerRegistry;
  ledger: ByteLedger;
  evaluate: (x: Float64Array) => Promise<Evaluation>;
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
}

export interface RoundsResult {
  rounds: RoundRecord[];
  clients: ClientRoundRecord[];
  finalModel: Float64Array;
  stopReason: StopReason;
  virtualSeconds: number;
}

interface Owed {
  wait: ExchangeWait;
  assignment: ClientAssignment;
  /** set when the wait closed without this client's up (wall clock: a late up fills in its bytes) */
  record: ClientRoundRecord | null;
}

interface SentDown {
  payloadBytes: number;
  encodedBytes: number;
  wireBytes: number;
}

function layerSum(records: readonly ClientRoundRecord[]): RoundRecord['bytes'] {
  const bytes = { payload: { up: 0, down: 0 }, encoded: { up: 0, down: 0 }, wire: { up: 0, down: 0 } };
  for (const r of records) {
    for (const layer of ['payload', 'encoded', 'wire'] as const) {
      bytes[layer].up += r.bytes[layer]?.up ?? 0;
      bytes[layer].down += r.bytes[layer]?.down ?? 0;
    }
  }
  return bytes;
}

export class RoundDriver {
  private readonly options: RoundDriverOptions;
  private readonly plan: RunPlan;
  private readonly server: ServerRuntime;
  private readonly speed: SpeedModel;
  private readonly clock = new VirtualClock();
  private readonly owed = new Map<number, Owed>();
  /** per client, an up still owed to a closed wait when a newer down replaced it (it may yet arrive, late) */
  private readonly superseded = new Map<number, Owed>();
  private readonly wall: boolean;
  private current: ExchangeWait | null = null;
  private stopRequested = false;
  /** the round in progress (0 before the first) */
  round = 0;

  constructor(options: RoundDriverOptions) {
    this.options = options;
    this.plan = options.plan;
    this.server = new ServerRuntime(options.plan);
    this.speed = speedModelFor(options.plan.scenario.timing, options.plan.clientCount, options.plan.scenario.seed);
    this.wall = options.plan.scenario.timing.clock === 'wall';
  }

  /**
   * An up from a worker, already validated against the plan's shapes and the worker's clients.
   * Throws ProtocolError E_ROUND when the client owes no up for that round and exchange.
   */
  acceptUp(message: UpMessage, encodedBytes: number, wireBytes: number): void {
    const owed = this.owedFor(message);
    if (owed === null) {
      const current = this.owed.get(message.clientId);
      const expected = current === undefined ? 'none' : `round ${current.wait.round}, exchange "${current.wait.exchange}"`;
      throw new ProtocolError('E_ROUND', `up: client ${message.clientId} owes no up for round ${message.round}, exchange "${message.exchange}" (owed: ${expected})`);
    }
    if (message.localSteps > owed.assignment.localSteps) {
      throw new ProtocolError('E_TYPE', `up.localSteps: ${message.localSteps} steps, but ${owed.assignment.localSteps} were assigned`);
    }
    const encodedUp: EncodedFields = {};
    const fieldPayloadBytes: Record<string, number> = {};
    let payload = 0;
    for (const [name, wv] of Object.entries(message.fields)) {
      encodedUp[name] = fromWire(wv, `up.fields.${name}`);
      fieldPayloadBytes[name] = payloadBytes(encodedUp[name]);
      payload += fieldPayloadBytes[name];
    }
    if (this.owed.get(message.clientId) === owed) this.owed.delete(message.clientId);
    else this.superseded.delete(message.clientId);
    this.options.ledger.recordRoundMessage('up', message.clientId, fieldPayloadBytes, encodedBytes, wireBytes);
    if (owed.wait.closed) {
      // A late up (wall clock): recorded with the bytes it cost, never aggregated.
      if (owed.record !== null) {
        owed.record.bytes.payload.up = payload;
        owed.record.bytes.encoded = { up: encodedBytes, down: owed.record.bytes.encoded?.down ?? 0 };
        owed.record.bytes.wire = { up: wireBytes, down: owed.record.bytes.wire?.down ?? 0 };
        owed.record.computeSeconds = message.computeSeconds;
        owed.record.transferSeconds = message.transferSeconds;
      }
      return;
    }
    owed.wait.deliver(message.clientId, { message, encodedUp, fieldPayloadBytes, payloadBytes: payload, encodedBytes, wireBytes, arrivedMs: this.options.nowMs() });
  }

  /** What an up answers: the client's current owed up, or the one its newest down superseded. */
  private owedFor(message: UpMessage): Owed | null {
    for (const owed of [this.owed.get(message.clientId), this.superseded.get(message.clientId)]) {
      if (owed !== undefined && owed.wait.round === message.round && owed.wait.exchange === message.exchange) return owed;
    }
    return null;
  }

  /** The round and exchange whose ups are awaited now, or null between exchanges. */
  expectation(): { round: number; exchange: string } | null {
    return this.current === null ? null : { round: this.current.round, exchange: this.current.exchange };
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

  /** A worker reported a non-finite update: the run diverged, as the engine's aggregate would find. */
  divergenceReported(): void {
    this.current?.diverge();
  }

  /** Ends the run after the exchange in progress, which stops waiting now. */
  requestStop(): void {
    this.stopRequested = true;
    this.current?.abort();
  }

  /**
   * A client still owing the up of a closed wait (too slow for fastest-k, past a deadline) takes
   * part too: its new down supersedes the discarded work, so that it works from the current
   * model as in the engine, and the worker withholds the superseded up. A client whose worker is
   * disconnected takes part as well and is dropped at once (sendDowns), so that the round's
   * records show it missing rather than absent.
   */
  private participantsOf(round: number, excluded: ReadonlySet<number>): number[] {
    const out: number[] = [];
    for (const id of roundParticipants(this.plan, round)) {
      if (this.options.registry.isClientInRun(id) && !excluded.has(id)) out.push(id);
    }
    return out;
  }

  private closeRuleFor(assignments: readonly ClientAssignment[], sentMs: number): CloseRule {
    const policy = this.plan.scenario.timing.policy;
    if (!this.wall) return { kind: 'all' };
    if (policy.kind === 'fastest-k') return { kind: 'first-k', k: Math.min(policy.k, assignments.length) };
    if (policy.kind === 'deadline') {
      const links = this.plan.scenario.timing.links;
      const denseBytes = this.plan.dim * 8 * 4;
      const transferSeconds = downlinkSecondsFor(links, denseBytes) + uplinkSecondsFor(links, denseBytes);
      return { kind: 'until', closeAtMs: sentMs + 1000 * (policy.budgetSeconds + transferSeconds + this.options.wallGraceSeconds) };
    }
    return { kind: 'all' };
  }

  private sendDowns(round: number, exchange: string, assignments: readonly ClientAssignment[], wait: ExchangeWait): Map<number, SentDown> {
    const broadcast = this.server.broadcast(exchange);
    const policy = this.plan.scenario.timing.policy;
    const deadlineSeconds = policy.kind === 'deadline' ? policy.budgetSeconds : null;
    const sent = new Map<number, SentDown>();
    for (const a of assignments) {
      const encodedDown = this.server.encodeDown(a.clientId, round, exchange, broadcast);
      const fields: WireFields = {};
      const fieldPayloadBytes: Record<string, number> = {};
      for (const [name, cv] of Object.entries(encodedDown)) {
        fields[name] = toWire(cv, `down.fields.${name}`);
        fieldPayloadBytes[name] = payloadBytes(cv);
      }
      const down: SentDown = { payloadBytes: encodedPayloadBytes(encodedDown), encodedBytes: 0, wireBytes: 0 };
      sent.set(a.clientId, down);
      const session = this.options.registry.hostOfClient(a.clientId);
      if (session === null) {
        wait.lose(a.clientId);
        continue;
      }
      const earlier = this.owed.get(a.clientId);
      if (earlier !== undefined) this.superseded.set(a.clientId, earlier);
      this.owed.set(a.clientId, { wait, assignment: a, record: null });
      const bytes = session.send({ type: 'down', round, exchange, clientId: a.clientId, localSteps: a.localSteps, stepSize: a.stepSize, fields, deadlineSeconds });
      down.encodedBytes = bytes.encodedBytes;
      down.wireBytes = bytes.wireBytes;
      this.options.ledger.recordRoundMessage('down', a.clientId, fieldPayloadBytes, bytes.encodedBytes, bytes.wireBytes);
    }
    return sent;
  }

  /** Timing as the models account it, over the clients whose up arrived in time. */
  private modelledTiming(assignments: readonly ClientAssignment[], wait: ExchangeWait, downs: Map<number, SentDown>): RoundTiming {
    const inputs: RoundParticipant[] = [];
    for (const a of assignments) {
      const arrival = wait.arrivals.get(a.clientId);
      if (arrival === undefined) continue;
      inputs.push({ clientId: a.clientId, stepSeconds: a.stepSeconds, plannedSteps: a.localSteps, stepsTaken: arrival.message.localSteps, downBytes: downs.get(a.clientId)!.payloadBytes, upBytes: arrival.payloadBytes });
    }
    if (inputs.length === 0) return { participants: [], roundSeconds: 0 };
    const policy = this.plan.scenario.timing.policy;
    // Lost clients shrink the round; fastest-k then counts at most everyone left.
    const effective = policy.kind === 'fastest-k' ? { ...policy, k: Math.min(policy.k, inputs.length) } : policy;
    return decideRound(effective, this.plan.scenario.timing.links, inputs);
  }

  /** Records, drops and the counted uploads of a closed exchange. */
  private settleExchange(round: number, exchange: string, assignments: readonly ClientAssignment[], wait: ExchangeWait, downs: Map<number, SentDown>) {
    const timing = this.modelledTiming(assignments, wait, downs);
    const byId = new Map(timing.participants.map((t) => [t.clientId, t]));
    const counted = new Set<number>();
    if (this.wall && wait.cause === 'first-k') {
      for (const id of wait.arrivalOrder) counted.add(id);
    } else {
      for (const t of timing.participants) if (!t.dropped) counted.add(t.clientId);
    }
    const records: ClientRoundRecord[] = [];
    const uploads: EncodedUpload[] = [];
    for (const a of assignments) {
      const down = downs.get(a.clientId)!;
      const arrival = wait.arrivals.get(a.clientId);
      const t = byId.get(a.clientId);
      const isCounted = counted.has(a.clientId);
      const record: ClientRoundRecord = {
        round,
        exchange,
        clientId: a.clientId,
        localSteps: t?.localSteps ?? a.localSteps,
        computeSeconds: 0,
        waitSeconds: 0,
        transferSeconds: 0,
        bytes: {
          payload: { up: arrival?.payloadBytes ?? 0, down: down.payloadBytes },
          encoded: { up: arrival?.encodedBytes ?? 0, down: down.encodedBytes },
          wire: { up: arrival?.wireBytes ?? 0, down: down.wireBytes },
        },
        dropped: !isCounted,
      };
      if (arrival !== undefined && t !== undefined) {
        if (this.wall) {
          record.computeSeconds = arrival.message.computeSeconds;
          record.transferSeconds = arrival.message.transferSeconds;
          record.waitSeconds = arrival.message.waitSeconds + (isCounted ? Math.max(0, wait.closedMs - arrival.arrivedMs) / 1000 : 0);
        } else {
          record.computeSeconds = t.computeSeconds;
          record.transferSeconds = t.downSeconds + t.upSeconds;
          record.waitSeconds = isCounted ? t.waitSeconds : 0;
        }
        if (isCounted) uploads.push({ clientId: a.clientId, stepsTaken: arrival.message.localSteps, stepSize: a.stepSize, encodedUp: arrival.encodedUp });
      } else {
        const owed = this.owed.get(a.clientId);
        if (owed !== undefined && owed.wait === wait) owed.record = record;
      }
      records.push(record);
    }
    return { records, uploads, roundSeconds: timing.roundSeconds };
  }

  /** Runs every round; resolves when the run stops. */
  async run(wallSecondsNow: () => number): Promise<RoundsResult> {
    const scenario = this.plan.scenario;
    const exchanges = this.server.method.exchanges;
    const initial = await this.options.evaluate(this.server.model());
    const rounds: RoundRecord[] = [
      { round: 0, suboptimality: initial.suboptimality, distance: initial.distance, bytes: { payload: { up: 0, down: 0 }, encoded: { up: 0, down: 0 }, wire: { up: 0, down: 0 } }, localSteps: {}, dropped: [], roundSeconds: 0, virtualSeconds: 0, wallSeconds: wallSecondsNow() },
    ];
    this.options.onRoundRecords?.(rounds[0], []);
    const clients: ClientRoundRecord[] = [];
    let stopReason: StopReason = 'rounds-complete';
    const { rounds: roundsMax, evalEvery, target } = scenario.run;

    for (let round = 1; round <= roundsMax && !this.stopRequested; round++) {
      await this.options.untilConnected?.();
      if (this.stopRequested) {
        stopReason = 'stopped';
        break;
      }
      this.round = round;
      const excluded = new Set<number>();
      const roundRecords: ClientRoundRecord[] = [];
      const localSteps: Record<string, number> = {};
      const dropped = new Set<number>();
      let roundSeconds = 0;
      let diverged = false;
      for (const exchange of exchanges) {
        const participants = this.participantsOf(round, excluded);
        if (participants.length === 0) break;
        const assignments = assignmentsFor(this.plan, this.speed, round, exchanges, exchange, participants);
        const wait = new ExchangeWait(round, exchange, participants, this.closeRuleFor(assignments, this.options.nowMs()), this.options.exchangeTimeoutSeconds, this.options.nowMs);
        this.current = wait;
        const downs = this.sendDowns(round, exchange, assignments, wait);
        await wait.done;
        this.current = null;
        if (wait.cause === 'timeout' && !this.stopRequested) {
          // Silent past the exchange limit: as good as lost for this exchange.
          for (const id of wait.pending()) excluded.add(id);
        }
        const settled = this.settleExchange(round, exchange, assignments, wait, downs);
        roundSeconds += settled.roundSeconds;
        for (const r of settled.records) {
          if (r.dropped) dropped.add(r.clientId);
          if (isLocalWorkExchange(exchanges, exchange)) localSteps[String(r.clientId)] = r.localSteps;
          // A client left out of one exchange (late, lost) sits out the rest of the round.
          if (!wait.arrivals.has(r.clientId)) excluded.add(r.clientId);
        }
        roundRecords.push(...settled.records);
        if (wait.cause === 'diverged') {
          diverged = true;
          break;
        }
        try {
          this.server.aggregate(exchange, settled.uploads);
        } catch (error) {
          if ((error as { code?: string }).code !== 'E_NOT_FINITE') throw error;
          diverged = true;
          break;
        }
      }
      if (diverged) stopReason = 'diverged';
      clients.push(...roundRecords);
      const virtualSeconds = this.clock.advance(roundSeconds);
      const noneLeft = this.options.registry.activeSessions().length === 0 && this.options.registry.disconnectedSessions().length === 0;
      const last = round === roundsMax || diverged || noneLeft || this.stopRequested;
      const evaluated = round % evalEvery === 0 || last ? await this.options.evaluate(this.server.model()) : null;
      const record: RoundRecord = {
        round,
        suboptimality: evaluated ? evaluated.suboptimality : null,
        distance: evaluated ? evaluated.distance : null,
        bytes: layerSum(roundRecords),
        localSteps,
        dropped: [...dropped].sort((a, b) => a - b),
        roundSeconds,
        virtualSeconds,
        wallSeconds: wallSecondsNow(),
      };
      rounds.push(record);
      this.options.onRoundRecords?.(record, roundRecords);
      this.options.onRound?.(record);
      if (diverged) break;
      if (noneLeft) {
        stopReason = 'workers-lost';
        break;
      }
      if (this.stopRequested) {
        stopReason = 'stopped';
        break;
      }
      if (evaluated && target > 0 && evaluated.suboptimality <= target) {
        stopReason = 'target-reached';
        break;
      }
    }
    return { rounds, clients, finalModel: this.server.model(), stopReason, virtualSeconds: this.clock.now() };
  }
}
