// The coordinator: listens, authenticates workers, deals clients, drives the rounds (rounds.ts)
// and collects what the run produced. Every incoming frame is validated before use; a bad one
// gets an error reply with its code and is counted, and the run goes on unchanged.

import { randomBytes } from 'node:crypto';
import { performance } from 'node:perf_hooks';
import type { Socket } from 'node:net';
import type { WebSocket } from 'ws';
import type { Scenario } from '../src/scenario/schema.js';
import { planFor } from '../src/engine/in-process-engine.js';
import { predictRun } from '../src/engine/predict-run.js';
import type { RunPlan, WirePlan } from '../src/engine/run-plan.js';
import type { PlanTheory } from '../src/theory/plan-theory.js';
import type { RecordSink, RoundRecord } from '../src/engine/round-record.js';
import type { RunState } from '../src/engine/run-state.js';
import type { ServerRuntime } from '../src/engine/server-runtime.js';
import type { WalkPoint } from '../src/engine/walk-transport.js';
import {
  checkClientSnapshot,
  clientStateBound,
  type ClientRuntimeSnapshot,
} from '../src/engine/client-runtime.js';
import { StateTreeError } from '../src/base/state-tree.js';
import {
  CLOSE_NORMAL,
  CLOSE_POLICY_VIOLATION,
  CONNECTION_LIMITS,
  controlFrameBytesMax,
  HANDSHAKE_LIMITS,
  helloFrameBytesMax,
  ProtocolError,
  fromWireState,
  limitsForPlan,
  pendingBytesMaxFor,
  receiveMessage,
  stateFrameBytesMaxFor,
  toWireState,
  RESUME_TOKEN_BYTES,
  type DoneReason,
  type FrameFailure,
  type ProtocolLimits,
  type StateMessage,
} from '../src/protocol/index.js';
import { ByteLedger } from './byte-ledger.js';
import { ConnectionGate } from './connection-gate.js';
import { fieldShapesFor, type FieldShapes } from './field-shapes.js';
import { awaitHello } from './handshake.js';
import { startListener, type Listener, type TlsFiles } from './listener.js';
import type { LimitReason } from './limit-reasons.js';
import { Liveness } from './liveness.js';
import { LogLimiter } from './log-limiter.js';
import { CoordinatorMetrics } from './metrics.js';
import { OraclePool } from './oracle-pool.js';
import { ProtocolErrorCounter } from './protocol-error-counter.js';
import { RoundDriver, type StopReason } from './rounds.js';
import type { CoordinatorOutcome } from './run-outcome.js';
import { RuntimeError } from './runtime-error.js';
import { WorkerRegistry } from './worker-registry.js';
import { WorkerSession, type SessionLimits } from './worker-session.js';
import type { LiveView } from './live-view/live-view.js';

export interface CoordinatorOptions {
  host: string;
  /** 0: the OS picks */
  port: number;
  /** the shared key whose HMAC proof every worker's hello carries */
  key: Uint8Array;
  tls: TlsFiles | null;
  /** the run starts once this many workers joined and their capacity covers every client */
  workersMin: number;
  workersMax: number;
  maxClientsPerWorker: number;
  joinTimeoutSeconds: number;
  /**
   * from a connection's TCP accept to its accepted hello (TLS, HTTP upgrade and hello alike);
   * CONNECTION_LIMITS.handshakeDeadlineSeconds when absent
   */
  handshakeDeadlineSeconds?: number;
  /** connections at once that have not passed their hello; CONNECTION_LIMITS' when absent */
  unauthenticatedConnectionsMax?: number;
  exchangeTimeoutSeconds: number;
  wallGraceSeconds: number;
  /** heartbeat timing; the protocol's defaults when absent */
  heartbeat?: { intervalSeconds: number; silenceSeconds: number };
  /**
   * how long a worker whose connection closed mid-run may take to resume before it is lost
   * (DEFAULT_RESUME_GRACE_SECONDS when absent; 0: lost at once, and no resume token is dealt)
   */
  resumeGraceSeconds?: number;
  onRound?: (record: RoundRecord) => void;
  log: (line: string) => void;
  /** go on from this state (a checkpoint's) instead of round 0; workers are sent their clients' states */
  resume?: RunState;
  /** ask for a checkpoint after every this many rounds (0 or absent: only when stopped) */
  checkpointEveryRounds?: number;
  /** keeps a checkpoint (writes its file); without it no checkpoint is taken */
  onCheckpoint?: (state: RunState) => void;
  /** publishes the run to the live view's viewers (--view), never waiting for them */
  view?: LiveView;
}

/** The clients' states a checkpoint waits for, one state message per client. */
interface StateCollection {
  round: number;
  states: Map<number, ClientRuntimeSnapshot>;
  missing: Set<number>;
  /** ends the wait (every state came, or a worker left) */
  settle: () => void;
}

/**
 * Headroom over the plan's frame limit for an authenticated worker: frames up to twice the limit
 * reach the codec's size check and get an E_SIZE reply; larger ones close the connection (1009).
 */
const PAYLOAD_HEADROOM_FACTOR = 2;

/**
 * Long enough for a worker's first few reconnection attempts (client/connection.ts backs off
 * from a quarter second), short enough that a dead worker's clients are not waited for long.
 */
export const DEFAULT_RESUME_GRACE_SECONDS = 5;

const DONE_REASON_OF: Record<StopReason, DoneReason> = {
  'target-reached': 'target-reached',
  'rounds-complete': 'rounds-complete',
  diverged: 'failed',
  'workers-lost': 'failed',
  stopped: 'stopped',
};

export class Coordinator {
  readonly plan: RunPlan;
  private readonly theory: PlanTheory;
  private readonly options: CoordinatorOptions;
  private readonly shapes: FieldShapes;
  /** the largest state message of this plan (a resumed run sends one per client after the welcome) */
  private readonly stateFrameBytesMax: number;
  /** made once the workers are welcomed (run): its copy of the data overlaps their building theirs */
  private oracle: OraclePool | null = null;
  private readonly registry: WorkerRegistry;
  private readonly ledger = new ByteLedger();
  private readonly errors = new ProtocolErrorCounter();
  private readonly driver: RoundDriver;
  /** served at /metrics when the command asks for it */
  readonly metrics: CoordinatorMetrics;
  private readonly liveness: Liveness;
  /** sessions whose connection is open; a closed one leaves, its socket counters kept below */
  private readonly sessions = new Set<WorkerSession>();
  /** socket counters of the sessions closed so far */
  private readonly closedSocketBytes = { up: 0, down: 0 };
  private readonly limitsOf = new Map<WorkerSession, ProtocolLimits>();
  /** the plan's limits before a worker's clients are dealt (joined, not yet welcomed) */
  private readonly joinLimits: ProtocolLimits;
  private readonly gate: ConnectionGate;
  /** lines about misbehaving peers: one per kind per interval */
  private readonly peerLog: LogLimiter;
  private readonly resumeGraceSeconds: number;
  /** per disconnected session, the timer that marks it lost when its grace passes */
  private readonly graceTimers = new Map<WorkerSession, NodeJS.Timeout>();
  /** called when a disconnected worker resumes or is lost */
  private presenceChanged: () => void = () => undefined;
  private runEnded = false;
  private readonly startedMs = performance.now();
  private listener: Listener | null = null;
  private nextSessionId = 1;
  private joinChanged: () => void = () => undefined;
  /** the sessions that said ready (their clients' data built) */
  private readonly readySessions = new Set<WorkerSession>();
  /** called when a session says ready, closes or is lost, and on stop */
  private readyChanged: () => void = () => undefined;
  private stopRequested = false;
  private collecting: StateCollection | null = null;

  constructor(scenario: Scenario, options: CoordinatorOptions) {
    this.options = options;
    this.resumeGraceSeconds = options.resumeGraceSeconds ?? DEFAULT_RESUME_GRACE_SECONDS;
    if (!(this.resumeGraceSeconds >= 0) || !Number.isFinite(this.resumeGraceSeconds)) {
      throw new RangeError(
        `resumeGraceSeconds: finite seconds, at least 0, expected; got ${this.resumeGraceSeconds}`,
      );
    }
    const { plan, theory } = planFor(scenario);
    this.plan = plan;
    this.theory = theory;
    this.shapes = fieldShapesFor(plan, theory.instance.objectives[0]);
    this.stateFrameBytesMax = stateFrameBytesMaxFor(this.clientStateBound());
    this.registry = new WorkerRegistry({
      clientCount: plan.clientCount,
      workersMin: options.workersMin,
      workersMax: options.workersMax,
      maxClientsPerWorker: options.maxClientsPerWorker,
    });
    const nowMs = () => performance.now();
    this.joinLimits = this.limitsFor(1);
    this.peerLog = new LogLimiter(options.log, CONNECTION_LIMITS.logIntervalSeconds, nowMs);
    this.gate = new ConnectionGate({
      deadlineSeconds:
        options.handshakeDeadlineSeconds ?? CONNECTION_LIMITS.handshakeDeadlineSeconds,
      unauthenticatedMax:
        options.unauthenticatedConnectionsMax ?? CONNECTION_LIMITS.unauthenticatedConnectionsMax,
      onDropped: (reason, peer) => {
        this.errors.countLimit(reason);
        this.peerLog.line(
          reason,
          `a connection from ${peer} was dropped (${reason}): ${reason === 'E_LIMIT_HANDSHAKE_DEADLINE' ? `no hello within ${options.handshakeDeadlineSeconds ?? CONNECTION_LIMITS.handshakeDeadlineSeconds} s` : 'the oldest of too many without a hello'}`,
        );
      },
    });
    this.metrics = new CoordinatorMetrics({
      ledger: this.ledger,
      currentRound: () => this.driver.round,
      connectedWorkers: () =>
        [...this.sessions].filter(
          (s) => (s.state === 'joined' || s.state === 'active') && s.isOpen(),
        ).length,
      lostWorkers: () => this.registry.lost.length,
      protocolErrors: () => this.errors.snapshot(),
      clientCount: plan.clientCount,
      optimumLoss: theory.optimum.loss,
      predictedRate: () => predictRun(plan, theory).rate,
      method: scenario.method.name,
    });
    this.driver = new RoundDriver({
      plan,
      registry: this.registry,
      ledger: this.ledger,
      evaluate: (x, round) => this.oracle!.evaluate(x, round),
      exchangeTimeoutSeconds: options.exchangeTimeoutSeconds,
      wallGraceSeconds: options.wallGraceSeconds,
      nowMs,
      untilConnected: () => this.untilConnected(),
      onRound: options.onRound,
      onRoundRecords: (record, clients) => {
        this.metrics.roundRecorded(record, clients);
        options.view?.roundRecorded(record, clients);
      },
      checkpoint: (point, server) => this.checkpoint(point, server),
      ...(options.resume === undefined ? {} : { resume: options.resume }),
      checkpointEveryRounds: options.checkpointEveryRounds ?? 0,
      ...(options.view === undefined ? {} : { board: options.view.board }),
    });
    const heartbeat = options.heartbeat ?? {
      intervalSeconds: HANDSHAKE_LIMITS.heartbeatIntervalSeconds,
      silenceSeconds: HANDSHAKE_LIMITS.heartbeatSilenceSeconds,
    };
    this.liveness = new Liveness({
      ...heartbeat,
      sessions: () => this.registry.activeSessions(),
      sendHeartbeat: (session) =>
        this.sendControl(session, { type: 'heartbeat', sentAtMs: Date.now() }),
      onSilent: (session) =>
        this.loseWorker(session, `silent for more than ${heartbeat.silenceSeconds} s`),
      nowMs,
    });
  }

  /** Starts listening; resolves to the URL workers join with. */
  async listen(): Promise<string> {
    this.listener = await startListener(
      {
        host: this.options.host,
        port: this.options.port,
        tls: this.options.tls,
        // ws's own bound is one for all connections: the largest a worker's frames may be, its
        // round frames holding an entry per client it may host; each session holds its own.
        maxPayloadBytes:
          this.limitsFor(Math.min(this.options.maxClientsPerWorker, this.plan.clientCount))
            .maxFrameBytes * PAYLOAD_HEADROOM_FACTOR,
        gate: this.gate,
        log: this.options.log,
      },
      (ws, socket) => void this.accept(ws, socket),
    );
    return this.listener.url;
  }

  /** The largest client state a state message carries, from the plan. */
  private clientStateBound(): { valuesMax: number; treeBytesMax: number } {
    const fieldNames = new Set(
      [...Object.values(this.shapes.down), ...Object.values(this.shapes.up)].flatMap((fields) =>
        Object.keys(fields),
      ),
    );
    return clientStateBound(this.wirePlan(), fieldNames.size);
  }

  private limitsFor(clientsPerWorker: number): ProtocolLimits {
    const heartbeat = this.options.heartbeat;
    return {
      ...limitsForPlan({
        downFieldDims: this.shapes.down,
        upFieldDims: this.shapes.up,
        clientsPerWorker,
        clientState: this.clientStateBound(),
      }),
      ...(heartbeat
        ? {
            heartbeatIntervalSeconds: heartbeat.intervalSeconds,
            heartbeatSilenceSeconds: heartbeat.silenceSeconds,
          }
        : {}),
    };
  }

  private sendControl(session: WorkerSession, message: Parameters<WorkerSession['send']>[0]): void {
    const sent = session.send(message);
    this.ledger.recordControlMessage('down', sent.encodedBytes, sent.wireBytes);
  }

  /** What an authenticated session is held to, for a worker hosting up to `clientsMax` clients. */
  private sessionLimits(limits: ProtocolLimits, clientsMax: number): SessionLimits {
    return {
      payloadLimitBytes: limits.maxFrameBytes * PAYLOAD_HEADROOM_FACTOR,
      frameLimitBytes: limits.maxFrameBytes,
      controlFrameBytesMax: controlFrameBytesMax(limits),
      pendingBytesMax: pendingBytesMaxFor(limits, clientsMax, this.stateFrameBytesMax),
    };
  }

  private async accept(ws: WebSocket, socket: Socket): Promise<void> {
    const session = new WorkerSession(
      this.nextSessionId++,
      ws,
      socket,
      () => performance.now(),
      helloFrameBytesMax(),
      {
        onFrameError: (bad, failure) => this.frameFailed(bad, failure),
        onLimit: (bad, reason, detail) => this.limitPassed(bad, reason, detail),
      },
    );
    this.sessions.add(session);
    session.onClose(() => this.closed(session));
    const hello = await awaitHello(session, {
      key: this.options.key,
      ledger: this.ledger,
      errors: this.errors,
      log: (kind, line) => this.peerLog.line(kind, line),
    });
    // The gate may have dropped the connection at its deadline while the hello was checked.
    if (hello === null || !this.gate.authenticated(session.transport())) return;
    session.authenticate(
      this.sessionLimits(
        this.joinLimits,
        Math.min(hello.capacity, this.options.maxClientsPerWorker),
      ),
    );
    if (hello.resume !== undefined) {
      this.resume(session, hello.resume);
      return;
    }
    session.workerName = hello.workerName;
    session.capacity = hello.capacity;
    if (this.stopRequested || !this.registry.join(session)) {
      this.sendControl(session, {
        type: 'error',
        code: 'E_CLIENT',
        message: 'the run has no clients left to host',
      });
      session.moveTo('refused');
      session.close(CLOSE_POLICY_VIOLATION, 'no clients left');
      return;
    }
    session.onFrame((frame, wireBytes, frameLimitBytes, streamSeconds) =>
      this.receive(session, frame, wireBytes, frameLimitBytes, streamSeconds),
    );
    this.options.log(
      `${session.label()} joined with capacity ${hello.capacity} (${this.registry.workersJoined()} workers, capacity ${this.registry.capacityJoined()} for ${this.plan.clientCount} clients)`,
    );
    this.joinChanged();
  }

  /** A malformed frame cost `session` its connection; its close handler does the rest. */
  private frameFailed(session: WorkerSession, failure: FrameFailure): void {
    this.errors.countFrame(failure.reason);
    this.peerLog.line(
      'frame errors',
      `${session.label()} closed with code ${failure.closeCode} (${failure.reason}): ${failure.detail}`,
    );
  }

  /** A connection limit cost `session` its connection; its close handler does the rest. */
  private limitPassed(session: WorkerSession, reason: LimitReason, detail: string): void {
    this.errors.countLimit(reason);
    this.peerLog.line(reason, `${session.label()} dropped (${reason}): ${detail}`);
  }

  private receive(
    session: WorkerSession,
    frame: Uint8Array,
    wireBytes: number,
    frameLimitBytes: number,
    streamSeconds: number,
  ): void {
    session.lastHeardMs = performance.now();
    const active = session.state === 'active';
    const limits = {
      ...(this.limitsOf.get(session) ?? this.joinLimits),
      maxFrameBytes: frameLimitBytes,
    };
    try {
      const expectation =
        this.plan.scenario.timing.clock === 'virtual' ? this.driver.expectation() : null;
      const message = receiveMessage(frame, {
        limits,
        expectedTypes: active
          ? ['ups', 'ready', 'state', 'heartbeat', 'error']
          : ['heartbeat', 'error'],
        expectedRound: expectation?.round ?? null,
        expectedExchange: expectation?.exchange ?? null,
        ownedClientIds: session.clientIds,
        fieldDims: this.shapes.up,
        auth: null,
      });
      if (message.type === 'ups') {
        session.upsReceived(message.entries.length);
        this.driver.acceptUps(message, frame.byteLength, wireBytes, streamSeconds);
        return;
      }
      this.ledger.recordControlMessage('up', frame.byteLength, wireBytes);
      if (message.type === 'state') {
        this.stateReceived(message);
        return;
      }
      if (message.type === 'ready') {
        this.readySessions.add(session);
        this.readyChanged();
        return;
      }
      if (message.type === 'error') {
        this.errors.countReported(message.code);
        this.options.log(`${session.label()} reported ${message.code}: ${message.message}`);
        // A worker's error is a claim about itself, never about the run: a worker that cannot
        // answer for its clients loses them, as a worker that went away would. A diverged
        // update is not an error; it comes as an up (updateNotFinite) for the walk to judge.
        if (session.state === 'active') this.loseWorker(session, `reported ${message.code}`);
      }
    } catch (error) {
      if (!(error instanceof ProtocolError)) throw error;
      this.ledger.recordControlMessage('up', frame.byteLength, wireBytes);
      this.errors.countReceived(error.code);
      if (!session.shouldAnswerBadMessage()) return;
      this.sendControl(session, {
        type: 'error',
        code: error.code,
        message: error.message.slice(0, limits.maxErrorMessageLength),
      });
    }
  }

  /** One client's state for the checkpoint being taken. Throws ProtocolError when it is not one. */
  private stateReceived(message: StateMessage): void {
    const collection = this.collecting;
    if (collection === null || collection.round !== message.round)
      throw new ProtocolError(
        'E_ROUND',
        `state.round: no checkpoint asked for round ${message.round}${collection === null ? '' : ` (asked: round ${collection.round})`}`,
      );
    const snapshot = fromWireState(message) as ClientRuntimeSnapshot;
    try {
      checkClientSnapshot(this.wirePlan(), message.clientId, snapshot);
    } catch (error) {
      if (error instanceof StateTreeError) throw new ProtocolError('E_TYPE', error.message);
      throw error;
    }
    collection.states.set(message.clientId, snapshot);
    collection.missing.delete(message.clientId);
    if (collection.missing.size === 0) collection.settle();
  }

  /**
   * Takes a checkpoint after `point.round`: the server's state here, every client's from its
   * worker (checkpoint -> one state per client). Skipped, with a line in the log, when a client's
   * worker is away or does not answer within the exchange timeout: the previous checkpoint stays.
   */
  private async checkpoint(point: WalkPoint, server: ServerRuntime): Promise<void> {
    const keep = this.options.onCheckpoint;
    if (keep === undefined) return;
    const serverState = server.snapshot();
    const away: number[] = [];
    for (let id = 0; id < this.plan.clientCount; id++)
      if (this.registry.hostOfClient(id) === null) away.push(id);
    if (away.length > 0) {
      this.options.log(
        `no checkpoint after round ${point.round}: clients ${away.join(', ')} have no worker connected`,
      );
      return;
    }
    const collection: StateCollection = {
      round: point.round,
      states: new Map(),
      missing: new Set(Array.from({ length: this.plan.clientCount }, (_, id) => id)),
      settle: () => undefined,
    };
    await new Promise<void>((resolve) => {
      const timer = setTimeout(resolve, this.options.exchangeTimeoutSeconds * 1000);
      collection.settle = () => {
        clearTimeout(timer);
        resolve();
      };
      this.collecting = collection;
      for (const session of this.registry.activeSessions())
        this.sendControl(session, { type: 'checkpoint', round: point.round });
    });
    this.collecting = null;
    if (collection.missing.size > 0) {
      this.options.log(
        `no checkpoint after round ${point.round}: no state came for clients ${[...collection.missing].join(', ')}`,
      );
      return;
    }
    keep({
      ...point,
      planHash: this.plan.planHash,
      server: serverState,
      clients: Array.from({ length: this.plan.clientCount }, (_, id) => collection.states.get(id)!),
    });
  }

  private closed(session: WorkerSession): void {
    this.sessions.delete(session);
    const totals = session.wireTotals();
    this.closedSocketBytes.up += totals.readBytes;
    this.closedSocketBytes.down += totals.writtenBytes;
    // A disconnected session keeps its limits for its resume; every other closed one is over.
    if (session.state !== 'active') this.limitsOf.delete(session);
    // A worker that left cannot answer a checkpoint: it is skipped rather than waited for.
    if (session.clientIds.size > 0) this.collecting?.settle();
    if (session.state === 'joined') {
      this.registry.leave(session);
      this.options.log(`${session.label()} left before the run started`);
    } else if (session.state === 'active') {
      if (this.resumeGraceSeconds > 0 && !this.runEnded) this.disconnect(session);
      else this.loseWorker(session, 'connection closed');
    }
    this.readyChanged();
  }

  /**
   * A closed socket may be a network blip or a dead process; the worker gets the grace period to
   * resume, its clients dropped from every exchange meanwhile. Silence past the heartbeat limit
   * is no blip: that worker is lost at once (Liveness), not disconnected.
   */
  private disconnect(session: WorkerSession): void {
    const clientIds = this.registry.markDisconnected(session);
    if (clientIds.length === 0) return;
    this.options.log(
      `${session.label()} disconnected in round ${this.driver.round}; clients ${clientIds.join(', ')} sit out until it resumes (grace ${this.resumeGraceSeconds} s)`,
    );
    this.driver.clientsLost(clientIds);
    this.options.view?.board.lost(clientIds);
    const timer = setTimeout(
      () =>
        this.loseWorker(
          session,
          `connection closed, no resume within ${this.resumeGraceSeconds} s`,
        ),
      this.resumeGraceSeconds * 1000,
    );
    timer.unref();
    this.graceTimers.set(session, timer);
  }

  /** A hello with a resume token: the worker takes its disconnected session over, or gets E_AUTH. */
  private resume(session: WorkerSession, resumeToken: Uint8Array): void {
    const resumed = this.runEnded ? null : this.registry.resume(resumeToken, session);
    if (resumed === null) {
      this.errors.countReceived('E_AUTH');
      this.options.log(
        `${session.label()} refused (E_AUTH): its resume token names no session waiting to resume`,
      );
      this.sendControl(session, {
        type: 'error',
        code: 'E_AUTH',
        message:
          'hello.resume: names no session waiting to resume (an unknown resume token, or its grace has passed)',
      });
      session.moveTo('refused');
      session.close(CLOSE_POLICY_VIOLATION, 'E_AUTH');
      return;
    }
    const { previous, previousState } = resumed;
    clearTimeout(this.graceTimers.get(previous));
    this.graceTimers.delete(previous);
    const limits = this.limitsOf.get(previous)!;
    this.limitsOf.delete(previous);
    this.limitsOf.set(session, limits);
    session.authenticate(this.sessionLimits(limits, session.clientIds.size));
    const clientIds = [...session.clientIds].sort((a, b) => a - b);
    if (previousState === 'active') {
      // The worker noticed the drop first: the old socket's ups will not come.
      previous.terminate();
      this.driver.clientsLost(clientIds);
    }
    this.driver.clientsResumed(clientIds);
    this.options.view?.board.rejoined(clientIds);
    session.onFrame((frame, wireBytes, frameLimitBytes, streamSeconds) =>
      this.receive(session, frame, wireBytes, frameLimitBytes, streamSeconds),
    );
    this.sendControl(session, {
      type: 'welcome',
      assignments: clientIds,
      plan: this.wirePlan(),
      limits,
      resumeToken: session.resumeToken!,
    });
    this.options.log(
      `${session.label()} resumed in round ${this.driver.round}; clients ${clientIds.join(', ')} take part again from the next exchange`,
    );
    this.presenceChanged();
  }

  private loseWorker(session: WorkerSession, reason: string): void {
    clearTimeout(this.graceTimers.get(session));
    this.graceTimers.delete(session);
    const clientIds = this.registry.markLost(session, this.driver.round, reason);
    if (clientIds.length === 0) return;
    this.limitsOf.delete(session);
    this.options.log(
      `${session.label()} lost in round ${this.driver.round} (${reason}); clients ${clientIds.join(', ')} leave the run`,
    );
    session.terminate();
    this.driver.clientsLost(clientIds);
    this.options.view?.board.lost(clientIds);
    this.presenceChanged();
    this.readyChanged();
  }

  /** Resolves once a worker is connected, none is away, or the run is stopping. */
  private async untilConnected(): Promise<void> {
    while (
      !this.stopRequested &&
      this.registry.activeSessions().length === 0 &&
      this.registry.disconnectedSessions().length > 0
    ) {
      await new Promise<void>((resolve) => (this.presenceChanged = resolve));
      this.presenceChanged = () => undefined;
    }
  }

  private waitForWorkers(): Promise<void> {
    return new Promise((resolve, reject) => {
      const timer = setTimeout(() => {
        this.joinChanged = () => undefined;
        reject(
          new RuntimeError(
            'E_NOT_ENOUGH_WORKERS',
            `after ${this.options.joinTimeoutSeconds} s, ${this.registry.workersJoined()} workers with capacity ${this.registry.capacityJoined()} joined; ${this.plan.clientCount} clients need hosts (at least ${this.options.workersMin} workers)`,
          ),
        );
      }, this.options.joinTimeoutSeconds * 1000);
      this.joinChanged = () => {
        if (this.stopRequested) {
          clearTimeout(timer);
          reject(new RuntimeError('E_STOPPED', 'stopped while waiting for workers'));
        } else if (this.registry.isReady()) {
          clearTimeout(timer);
          this.joinChanged = () => undefined;
          resolve();
        }
      };
      this.joinChanged();
    });
  }

  /**
   * Resolves once every active worker said ready (its clients' data built), the run is stopping,
   * or joinTimeoutSeconds passed: then the rounds start anyway, as the log says, and a worker
   * still building only delays its first ups.
   */
  private waitForReady(): Promise<void> {
    return new Promise((resolve) => {
      const settle = (): void => {
        clearTimeout(timer);
        this.readyChanged = () => undefined;
        resolve();
      };
      const timer = setTimeout(() => {
        const building = this.registry
          .activeSessions()
          .filter((s) => !this.readySessions.has(s))
          .map((s) => s.label());
        this.options.log(
          `after ${this.options.joinTimeoutSeconds} s, ${building.join(', ')} still building their clients' data; the rounds start`,
        );
        settle();
      }, this.options.joinTimeoutSeconds * 1000);
      this.readyChanged = () => {
        if (
          this.stopRequested ||
          this.registry.activeSessions().every((s) => this.readySessions.has(s))
        )
          settle();
      };
      this.readyChanged();
    });
  }

  private wirePlan(): WirePlan {
    return {
      scenario: this.plan.scenario,
      methodConfig: this.plan.methodConfig,
      dim: this.plan.dim,
    };
  }

  private welcomeAll(): void {
    const wire = this.wirePlan();
    for (const [session, clientIds] of this.registry.assign()) {
      const limits = this.limitsFor(Math.max(1, clientIds.length));
      this.limitsOf.set(session, limits);
      // Its round frames hold an entry per client it hosts: the frame limit grows with them.
      session.authenticate(this.sessionLimits(limits, clientIds.length));
      // Authentication only, like the challenge nonce: no result depends on it.
      session.resumeToken =
        this.resumeGraceSeconds > 0 ? new Uint8Array(randomBytes(RESUME_TOKEN_BYTES)) : null;
      this.sendControl(session, {
        type: 'welcome',
        assignments: clientIds,
        plan: wire,
        limits,
        ...(session.resumeToken === null ? {} : { resumeToken: session.resumeToken }),
      });
      this.options.log(`${session.label()} hosts clients ${clientIds.join(', ')}`);
      const resume = this.options.resume;
      if (resume !== undefined)
        for (const clientId of clientIds)
          this.sendControl(session, {
            type: 'state',
            round: resume.round,
            clientId,
            ...toWireState(resume.clients[clientId]),
          });
    }
  }

  /**
   * Waits for workers, runs every round, says done; resolves to what the run produced. The
   * records go to the sink `openRecords` opens once the workers are in (a run that never starts
   * opens none).
   */
  async run(openRecords?: () => RecordSink): Promise<CoordinatorOutcome> {
    await this.waitForWorkers();
    const records = openRecords?.() ?? null;
    this.welcomeAll();
    // The oracle thread gets its copy of the data while the workers build theirs.
    this.oracle = new OraclePool(this.plan, this.theory);
    this.options.view?.runStarted(
      this.plan,
      this.registry
        .sessions()
        .map((s) => ({ workerName: s.workerName, clientIds: [...s.clientIds] })),
    );
    this.liveness.start();
    await this.waitForReady();
    // Wall seconds (per round, the ETA, the total) count from the first round: waiting for
    // workers to join and build their clients' data is the cluster's start-up, not the method's
    // cost, and is reported apart.
    const roundsStartedMs = performance.now();
    const joinSeconds = (roundsStartedMs - this.startedMs) / 1000;
    const wallBeforeSeconds = this.options.resume?.wallSeconds ?? 0;
    const result = await this.driver.run(
      () => wallBeforeSeconds + (performance.now() - roundsStartedMs) / 1000,
      records,
    );
    this.liveness.stop();
    this.runEnded = true;
    // A worker still away when the run ends never came back: its clients left the run.
    for (const session of this.registry.disconnectedSessions())
      this.loseWorker(session, 'connection closed, not resumed before the run ended');
    const reason = DONE_REASON_OF[result.stopReason];
    for (const session of this.registry.activeSessions())
      this.sendControl(session, { type: 'done', reason });
    this.peerLog.flush();
    const socketBytes = { ...this.closedSocketBytes };
    for (const session of this.sessions) {
      const totals = session.wireTotals();
      socketBytes.up += totals.readBytes;
      socketBytes.down += totals.writtenBytes;
    }
    for (const session of this.registry.activeSessions()) {
      session.moveTo('finished');
      session.close(CLOSE_NORMAL, 'done');
    }
    const layers = this.ledger.roundTotals();
    return {
      plan: this.plan,
      theory: this.theory,
      finalModel: result.finalModel,
      stopReason: result.stopReason,
      wallSeconds: (performance.now() - roundsStartedMs) / 1000,
      joinSeconds,
      virtualSeconds: result.virtualSeconds,
      bytesLayers: layers,
      controlBytes: this.ledger.controlTotals(),
      socketBytes,
      payloadBytesByField: this.ledger.payloadByField(),
      workers: this.registry.sessions().map((s) => ({
        workerName: s.workerName,
        clientIds: [...s.clientIds].sort((a, b) => a - b),
      })),
      lostWorkers: [...this.registry.lost],
      protocolErrors: this.errors.snapshot(),
    };
  }

  /** Stops the run after the round in progress (SIGINT), with a checkpoint; run() then resolves with 'stopped'. */
  stop(): void {
    this.stopRequested = true;
    this.driver.requestStop();
    this.joinChanged();
    this.presenceChanged();
    this.readyChanged();
  }

  /** Closes every connection, the listener and the oracle pool. */
  async close(): Promise<void> {
    this.liveness.stop();
    for (const timer of this.graceTimers.values()) clearTimeout(timer);
    this.graceTimers.clear();
    for (const session of this.sessions) session.terminate();
    await this.listener?.close();
    await this.oracle?.close();
  }
}
