// The worker process: joins a coordinator (challenge -> hello with the shared key's proof ->
// welcome), hosts the clients it is dealt, and answers every entry of a downs frame with an up
// after the client's local work, paced by the speed and link models; ups go in ups frames
// (up-batch.ts: one per downs frame on the virtual clock, those ready together on the wall clock). Every incoming frame is validated; a bad one
// gets an error reply with its code and is otherwise ignored. A connection that drops mid-run
// (no done, no final error) is reconnected with the same backoff as the join, and the new
// challenge answered with the welcome's resume token, which gives the worker its clients back.
// A coordinator that died and was resumed from its checkpoint (`roundwire resume`) knows no
// token: the worker waits for it with bounded backoff (RECONNECT_RETRY_POLICY), and when its
// resume is refused it joins afresh; the coordinator then deals clients again and sends each
// its state from the checkpoint (state messages), so the worker keeps nothing of its own.
//
// Order on a connection: the hello is the first message sent on it (the coordinator refuses
// anything else with E_ORDER), and nothing answers a downs frame that came on an earlier connection,
// even when its client's work ends after the reconnection: the coordinator counted that client
// as dropped from its exchange, and the up would reach the new connection ahead of the hello.

import { performance } from 'node:perf_hooks';
import type WebSocket from 'ws';
import {
  CLOSE_NORMAL,
  HANDSHAKE_LIMITS,
  PROTOCOL_VERSION,
  ProtocolError,
  encodeMessage,
  exchangeSlots,
  fromWire,
  proveKey,
  receiveMessage,
  toWire,
  fromWireState,
  toWireState,
  writeUpsFrame,
  type DownEntry,
  type DownsFrame,
  type FieldDims,
  type Message,
  type MessageType,
  type ProtocolLimits,
  type UpEntry,
  type WelcomeMessage,
  type WireFields,
} from '../src/protocol/index.js';
import type { ClientRuntimeSnapshot, EncodedFields } from '../src/engine/client-runtime.js';
import type { WirePlan } from '../src/engine/run-plan.js';
import { dataFileCopyProblem } from '../src/data/file-pool.js';
import { downFieldDimsFor } from '../src/engine/down-field-dims.js';
import { isNonFiniteError } from '../src/base/coded-error.js';
import { drawLinks } from '../src/timing/links.js';
import { ownDownFrameBytes, ownUpFrameBytes } from '../src/engine/own-frame-bytes.js';
import { FrameBuffers } from './frame-buffers.js';
import { speedModelFor } from '../src/timing/round-speed.js';
import { ClientHost } from './client-host.js';
import {
  connectWithRetry,
  JoinError,
  JOIN_RETRY_POLICY,
  RECONNECT_RETRY_POLICY,
  type RetryPolicy,
} from './connection.js';
import { LinkShaper } from './link.js';
import { ComputePacer } from './speed.js';
import { UpBatch } from './up-batch.js';
import type { WorkerMetrics } from './metrics.js';

export interface WorkerOptions {
  url: string;
  /** the shared key, read from the key file */
  key: Uint8Array;
  /** how many clients this worker offers to host */
  capacity: number;
  workerName: string;
  /** most pool threads when hosting several clients */
  threadsMax: number;
  retry?: RetryPolicy;
  /** most seconds of waiting for the coordinator before the first welcome (JOIN_RETRY_POLICY's when absent) */
  coordinatorWaitSeconds?: number;
  /** most seconds of waiting for a coordinator that dropped mid-run (RECONNECT_RETRY_POLICY's when absent) */
  reconnectWaitSeconds?: number;
  /** PEM certificates trusted for a wss:// coordinator beside the system's (e.g. its self-signed one) */
  trustedCertificatesPem?: string;
  /** counts messages, link delay and each hosted client's work when given */
  metrics?: WorkerMetrics;
  log: (line: string) => void;
}

export interface WorkerExit {
  /** the coordinator's done reason, or why the worker stopped */
  reason: string;
  clientIds: number[];
}

/**
 * Most resumes in one run: each follows a drop, and a link that drops this often is better
 * reported than papered over.
 */
export const RESUMES_MAX = 32;

/** A worker trusts the coordinator it joined for frame sizes; this only bounds a runaway peer. */
const WORKER_FRAME_BYTES_MAX = 512 * 1024 * 1024;

interface Hosting {
  plan: WirePlan;
  clientIds: Set<number>;
  /** the fields of each exchange's downs, with dimensions: receiveMessage checks every downs frame */
  downFieldDims: FieldDims;
  /** the method's exchanges in order: a round frame names its exchange by its index here */
  exchanges: readonly string[];
  host: ClientHost;
  link: LinkShaper;
  pacer: ComputePacer;
  limits: ProtocolLimits;
  /** from the welcome; null when the coordinator does not let workers resume */
  resumeToken: Uint8Array | null;
}

export class Worker {
  private readonly options: WorkerOptions;
  private ws: WebSocket | null = null;
  private phase: 'challenge' | 'welcome' | 'active' | 'done' = 'challenge';
  private hosting: Hosting | null = null;
  private heartbeatTimer: NodeJS.Timeout | null = null;
  private lastHeardMs = performance.now();
  /** counts connections; a downs frame remembers the one it came on */
  private connectionNumber = 0;
  /** each hosted client's newest down entry: an up for an older one is superseded and withheld */
  private readonly newestDownOf = new Map<number, DownEntry>();
  /** the last hello carried a resume token */
  private resumeSent = false;
  /** the coordinator refused the resume (it was restarted): join afresh */
  private rejoinFresh = false;
  private finish: (exit: WorkerExit) => void = () => undefined;
  private fail: (error: Error) => void = () => undefined;

  /** the ups frames' buffers, used again once written out */
  private readonly frameBuffers = new FrameBuffers();

  constructor(options: WorkerOptions) {
    this.options = options;
  }

  /**
   * Joins, works until the coordinator says done, resuming after a dropped connection; rejects
   * if refused, or cut off with no way back (before the welcome, resuming off, attempts spent).
   */
  async run(): Promise<WorkerExit> {
    const ended = new Promise<WorkerExit>((resolve, reject) => {
      this.finish = resolve;
      this.fail = reject;
    });
    // A failure between connections (a refused resume) is read by the next wait, not lost.
    ended.catch(() => undefined);
    try {
      for (let resumes = 0; ; resumes++) {
        const ws = await this.connect();
        const outcome = await new Promise<WorkerExit | 'closed'>((resolve, reject) => {
          ended.then(resolve, reject);
          ws.on('close', () => resolve('closed'));
        });
        if (outcome !== 'closed') return outcome;
        this.stopHeartbeats();
        if (this.rejoinFresh) {
          this.rejoinFresh = false;
          await this.dropHosting();
          this.options.log(
            'the coordinator refused to resume this session (E_AUTH: it was restarted, or the grace passed); joining afresh',
          );
          this.phase = 'challenge';
          continue;
        }
        const resumeToken = this.hosting?.resumeToken ?? null;
        if (this.hosting === null)
          throw new JoinError('the coordinator closed the connection before the run');
        if (resumeToken === null)
          throw new JoinError('the coordinator closed the connection mid-run');
        if (resumes >= RESUMES_MAX)
          throw new JoinError(
            `the connection dropped mid-run after ${RESUMES_MAX} resumes; giving up`,
          );
        this.options.log(
          `the connection dropped mid-run; reconnecting to resume (${resumes + 1}/${RESUMES_MAX})`,
        );
        this.phase = 'challenge';
      }
    } finally {
      await this.stop();
    }
  }

  /** Forgets the clients of a session the coordinator no longer knows. */
  private async dropHosting(): Promise<void> {
    const hosting = this.hosting;
    this.hosting = null;
    this.newestDownOf.clear();
    await hosting?.host.close();
  }

  private retryPolicy(): RetryPolicy {
    if (this.options.retry !== undefined) return this.options.retry;
    if (this.hosting === null)
      return {
        ...JOIN_RETRY_POLICY,
        waitTotalSeconds: this.options.coordinatorWaitSeconds ?? JOIN_RETRY_POLICY.waitTotalSeconds,
      };
    return {
      ...RECONNECT_RETRY_POLICY,
      waitTotalSeconds:
        this.options.reconnectWaitSeconds ?? RECONNECT_RETRY_POLICY.waitTotalSeconds,
    };
  }

  private connect(): Promise<WebSocket> {
    this.connectionNumber += 1;
    return connectWithRetry(
      this.options.url,
      this.retryPolicy(),
      WORKER_FRAME_BYTES_MAX,
      (frame, socket) => {
        // The first frame may come before the connection's promise settles; answer on its socket.
        this.ws = socket;
        this.receive(frame);
      },
      this.options.log,
      this.options.trustedCertificatesPem ?? null,
    ).then((ws) => (this.ws = ws));
  }

  private stopHeartbeats(): void {
    if (this.heartbeatTimer !== null) clearInterval(this.heartbeatTimer);
    this.heartbeatTimer = null;
  }

  /** Closes the connection and the client pool. */
  async stop(): Promise<void> {
    this.stopHeartbeats();
    if (this.ws !== null && this.ws.readyState === this.ws.OPEN)
      this.ws.close(CLOSE_NORMAL, 'worker done');
    await this.hosting?.host.close();
  }

  private send(message: Parameters<typeof encodeMessage>[0]): void {
    this.sendBytes(message.type, encodeMessage(message));
  }

  /** `written`: called once the socket is done with `bytes` (written out, or the send failed). */
  private sendBytes(type: MessageType, bytes: Uint8Array, written?: () => void): void {
    if (this.ws === null || this.ws.readyState !== this.ws.OPEN) return;
    this.ws.send(bytes, { binary: true }, written);
    this.options.metrics?.messageSent(type, bytes.byteLength);
  }

  private expectedTypes(): MessageType[] {
    switch (this.phase) {
      case 'challenge':
        return ['challenge', 'error'];
      case 'welcome':
        return ['welcome', 'error'];
      default:
        return ['downs', 'heartbeat', 'error', 'done', 'checkpoint', 'state'];
    }
  }

  private receive(frame: Uint8Array): void {
    this.lastHeardMs = performance.now();
    const limits = this.hosting?.limits ?? HANDSHAKE_LIMITS;
    let message: Message | undefined;
    try {
      message = receiveMessage(frame, {
        limits,
        expectedTypes: this.expectedTypes(),
        expectedRound: null,
        expectedExchange: null,
        ownedClientIds: this.hosting?.clientIds ?? null,
        fieldDims: this.hosting?.downFieldDims ?? null,
        auth: null,
      });
      this.options.metrics?.frameReceived(message.type, frame.byteLength);
      this.handle(message);
    } catch (error) {
      if (!(error instanceof ProtocolError)) {
        this.fail(error as Error);
        return;
      }
      if (message === undefined) this.options.metrics?.frameReceived(null, frame.byteLength);
      this.options.metrics?.protocolError(error.code);
      this.options.log(`bad message from the coordinator (${error.code}): ${error.message}`);
      this.send({
        type: 'error',
        code: error.code,
        message: error.message.slice(0, limits.maxErrorMessageLength),
      });
      // Before the run, a bad challenge or welcome leaves nothing to work with.
      if (this.phase !== 'active')
        this.fail(
          new JoinError(
            `the coordinator's ${this.phase} was refused (${error.code}): ${error.message}`,
          ),
        );
    }
  }

  private handle(message: Message): void {
    switch (message.type) {
      case 'challenge': {
        this.phase = 'welcome';
        const resumeToken = this.hosting?.resumeToken ?? null;
        this.resumeSent = resumeToken !== null;
        this.send({
          type: 'hello',
          protocolVersion: PROTOCOL_VERSION,
          workerName: this.options.workerName,
          capacity: this.options.capacity,
          proof: proveKey(this.options.key, message.nonce),
          ...(resumeToken === null ? {} : { resume: resumeToken }),
        });
        return;
      }
      case 'welcome':
        if (this.hosting === null) this.welcome(message);
        else this.resumed(this.hosting, message);
        return;
      case 'downs':
        this.downs(message);
        return;
      case 'checkpoint':
        this.sendStates(message.round);
        return;
      case 'state':
        this.restoreState(message);
        return;
      case 'error':
        if (this.phase === 'welcome' && this.resumeSent && message.code === 'E_AUTH')
          this.rejoinFresh = true;
        else if (this.phase !== 'active')
          this.fail(
            new JoinError(`refused by the coordinator (${message.code}): ${message.message}`),
          );
        else this.options.log(`the coordinator reported ${message.code}: ${message.message}`);
        return;
      case 'done':
        this.phase = 'done';
        this.finish({
          reason: message.reason,
          clientIds: [...(this.hosting?.clientIds ?? [])].sort((a, b) => a - b),
        });
        return;
      default:
        return;
    }
  }

  private welcome(message: WelcomeMessage): void {
    const { plan } = message;
    if (message.assignments.length > this.options.capacity)
      throw new ProtocolError(
        'E_SIZE',
        `welcome.assignments: ${message.assignments.length} clients for a capacity of ${this.options.capacity}`,
      );
    // Each worker reads the data file itself: a copy other than the plan's would train other data.
    const copyProblem =
      plan.scenario.data.source === 'file' ? dataFileCopyProblem(plan.scenario.data) : null;
    if (copyProblem !== null) {
      this.send({
        type: 'error',
        code: 'E_DATA_COPY',
        message: copyProblem.slice(0, message.limits.maxErrorMessageLength),
      });
      this.fail(new JoinError(`cannot host clients of this plan: ${copyProblem}`));
      return;
    }
    const wall = plan.scenario.timing.clock === 'wall';
    const downFieldDims = downFieldDimsFor(plan);
    this.hosting = {
      plan,
      clientIds: new Set(message.assignments),
      downFieldDims,
      exchanges: exchangeSlots(downFieldDims),
      host: new ClientHost(plan, message.assignments, { threadsMax: this.options.capacity }),
      link: new LinkShaper(
        drawLinks(plan.scenario.timing.links, plan.scenario.clients.count, plan.scenario.seed),
        wall,
      ),
      pacer: new ComputePacer(
        speedModelFor(plan.scenario.timing, plan.scenario.clients.count, plan.scenario.seed),
        wall,
      ),
      limits: message.limits,
      resumeToken: message.resumeToken ?? null,
    };
    this.phase = 'active';
    this.options.metrics?.hosting(message.assignments.length);
    this.options.log(
      `hosting clients ${message.assignments.join(', ')} of "${plan.scenario.name}" (${plan.scenario.method.name})`,
    );
    this.startHeartbeats(message.limits);
    // The coordinator starts the rounds once every worker has its data (messages.ts, ready).
    const connection = this.connectionNumber;
    void this.hosting.host.ready().then(() => {
      if (this.mayAnswerOn(connection)) this.send({ type: 'ready' });
    });
  }

  /**
   * The welcome on a resumed connection: the same clients as before. Downs that came before the
   * drop are answered no more (their exchanges counted these clients as dropped), and both ends
   * start the clients' replicas afresh (ServerRuntime.resetReplicas on the coordinator), since a
   * down or up lost with the old connection advanced one end's replica and not the other's. The
   * reset is queued after the clients' work in progress, so the next down finds it done.
   */
  private resumed(hosting: Hosting, message: WelcomeMessage): void {
    const ids = [...hosting.clientIds].sort((a, b) => a - b);
    if (
      message.assignments.length !== ids.length ||
      message.assignments.some((id, i) => id !== ids[i])
    ) {
      throw new ProtocolError(
        'E_CLIENT',
        `welcome.assignments: resumed with clients ${message.assignments.join(', ')}, hosting ${ids.join(', ')}`,
      );
    }
    hosting.limits = message.limits;
    hosting.resumeToken = message.resumeToken ?? null;
    this.newestDownOf.clear();
    void hosting.host.resetReplicas(ids).catch((error: Error) => this.fail(error));
    this.phase = 'active';
    this.options.log(`resumed hosting clients ${ids.join(', ')}`);
    this.startHeartbeats(message.limits);
  }

  /** Each hosted client's state after its work up to `round`, one state message per client. */
  private sendStates(round: number): void {
    const hosting = this.hosting!;
    for (const clientId of [...hosting.clientIds].sort((a, b) => a - b)) {
      hosting.host
        .snapshot(clientId)
        .then((snapshot) => this.send({ type: 'state', round, clientId, ...toWireState(snapshot) }))
        .catch((error: Error) => this.fail(error));
    }
  }

  /** A resumed run's state for a client, restored before any down that follows. */
  private restoreState(message: Extract<Message, { type: 'state' }>): void {
    const hosting = this.hosting!;
    if (!hosting.clientIds.has(message.clientId))
      throw new ProtocolError(
        'E_CLIENT',
        `state.clientId: client ${message.clientId} is not hosted by this worker`,
      );
    const snapshot = fromWireState(message) as ClientRuntimeSnapshot;
    hosting.host
      .restore(message.clientId, snapshot)
      .catch((error: Error) => this.reportRestoreFailure(message.clientId, error));
  }

  private reportRestoreFailure(clientId: number, error: Error): void {
    const limits = this.hosting?.limits ?? HANDSHAKE_LIMITS;
    this.options.log(`client ${clientId}: the coordinator's state was refused: ${error.message}`);
    this.send({
      type: 'error',
      code: 'E_TYPE',
      message: `state of client ${clientId}: ${error.message}`.slice(
        0,
        limits.maxErrorMessageLength,
      ),
    });
  }

  private startHeartbeats(limits: ProtocolLimits): void {
    this.stopHeartbeats();
    this.heartbeatTimer = setInterval(() => {
      if (performance.now() - this.lastHeardMs > limits.heartbeatSilenceSeconds * 1000) {
        this.options.log(
          `the coordinator was silent for more than ${limits.heartbeatSilenceSeconds} s; dropping the connection`,
        );
        // Handled as any drop: resumed if the coordinator lets workers resume, else the end.
        this.stopHeartbeats();
        this.ws?.terminate();
        return;
      }
      this.send({ type: 'heartbeat', sentAtMs: Date.now() });
    }, limits.heartbeatIntervalSeconds * 1000);
    this.heartbeatTimer.unref();
  }

  /**
   * A downs frame that receiveMessage passed: its exchange, entries, fields and dimensions are
   * the plan's. Each entry's client works as if its down had come alone; the ups gather in an
   * UpBatch.
   */
  private downs(frame: DownsFrame): void {
    const hosting = this.hosting!;
    const common: EncodedFields = {};
    for (const [name, wv] of Object.entries(frame.common))
      common[name] = fromWire(wv, `downs.common.${name}`);
    const connection = this.connectionNumber;
    const exchangeIndex = hosting.exchanges.indexOf(frame.exchange);
    const batch = new UpBatch(
      hosting.plan.scenario.timing.clock === 'wall' ? 'same-turn' : 'frame-done',
      frame.entries.length,
      (entries) => {
        if (!this.mayAnswerOn(connection)) return;
        const frameBytes = writeUpsFrame(frame.round, exchangeIndex, entries, (length) =>
          this.frameBuffers.take(length),
        );
        this.sendBytes('ups', frameBytes, () => this.frameBuffers.give(frameBytes));
      },
    );
    for (const entry of frame.entries) {
      // The common vectors are decoded once and shared by the entries: a client's runtime only
      // reads a down, decoding it into arrays of its own (its downlink replicas).
      const encodedDown: EncodedFields = { ...common };
      for (const [name, wv] of Object.entries(entry.fields))
        encodedDown[name] = fromWire(wv, `downs.fields.${name}`);
      this.newestDownOf.set(entry.clientId, entry);
      void this.answer(hosting, frame, entry, encodedDown, connection, batch).catch(
        (error: Error) => {
          batch.skip();
          this.reportFailure(frame, entry, error, connection);
        },
      );
    }
  }

  /** True while the worker is welcomed on the connection `connection` names (see the order rule above). */
  private mayAnswerOn(connection: number): boolean {
    return connection === this.connectionNumber && this.phase === 'active';
  }

  private async answer(
    hosting: Hosting,
    frame: DownsFrame,
    entry: DownEntry,
    encodedDown: EncodedFields,
    connection: number,
    batch: UpBatch,
  ): Promise<void> {
    const { round, exchange } = frame;
    const { clientId } = entry;
    const exchangeIndex = hosting.exchanges.indexOf(exchange);
    const downSeconds = await hosting.link.received(
      clientId,
      ownDownFrameBytes(round, exchangeIndex, frame.deadlineSeconds, entry, encodedDown),
    );
    let result;
    try {
      result = await hosting.host.work({
        clientId,
        round,
        exchange,
        encodedDown,
        localSteps: entry.localSteps,
        stepSize: entry.stepSize,
      });
    } catch (error) {
      if (!isNonFiniteError(error)) throw error;
      this.sendNotFinite(frame, entry, downSeconds, connection, batch);
      return;
    }
    const computeSeconds = await hosting.pacer.pace(
      clientId,
      round,
      result.stepsTaken,
      result.measuredSeconds,
    );
    const fields: WireFields = {};
    for (const [name, cv] of Object.entries(result.encodedUp))
      fields[name] = toWire(cv, `ups.fields.${name}`);
    const upSeconds = await hosting.link.beforeSend(
      clientId,
      ownUpFrameBytes(round, exchangeIndex, clientId, result.stepsTaken, result.encodedUp),
    );
    this.options.metrics?.clientWorked(clientId, computeSeconds, result.stepsTaken);
    this.options.metrics?.linkDelay('down', downSeconds);
    this.options.metrics?.linkDelay('up', upSeconds);
    // A newer down for this client means the coordinator closed this exchange without it.
    if (this.newestDownOf.get(clientId) !== entry || !this.mayAnswerOn(connection)) {
      batch.skip();
      return;
    }
    batch.add({
      clientId,
      fields,
      localSteps: result.stepsTaken,
      computeSeconds,
      waitSeconds: result.queuedSeconds,
      transferSeconds: downSeconds + upSeconds,
    });
  }

  /**
   * A client whose update is not finite answers with an up that says so in place of its vectors
   * (which must be finite on the wire): the coordinator's round walk judges it as the
   * in-process engine judges its own client's, and the run stops as diverged in both.
   */
  private sendNotFinite(
    frame: DownsFrame,
    entry: DownEntry,
    downSeconds: number,
    connection: number,
    batch: UpBatch,
  ): void {
    const { clientId } = entry;
    this.options.log(
      `client ${clientId}, round ${frame.round} (${frame.exchange}): its update is not finite`,
    );
    if (this.newestDownOf.get(clientId) !== entry || !this.mayAnswerOn(connection)) {
      batch.skip();
      return;
    }
    const up: UpEntry = {
      clientId,
      fields: {},
      updateNotFinite: true,
      localSteps: entry.localSteps,
      computeSeconds: 0,
      waitSeconds: 0,
      transferSeconds: downSeconds,
    };
    batch.add(up);
  }

  /**
   * A client that cannot answer for another reason tells the coordinator why; the coordinator
   * then counts this worker's clients lost.
   */
  private reportFailure(
    frame: DownsFrame,
    entry: DownEntry,
    error: Error,
    connection: number,
  ): void {
    const code = error instanceof ProtocolError ? error.code : 'E_TYPE';
    const limit =
      this.hosting?.limits.maxErrorMessageLength ?? HANDSHAKE_LIMITS.maxErrorMessageLength;
    this.options.log(
      `client ${entry.clientId}, round ${frame.round} (${frame.exchange}) failed: ${error.message}`,
    );
    if (!this.mayAnswerOn(connection)) return;
    this.send({
      type: 'error',
      code,
      message:
        `client ${entry.clientId}, round ${frame.round}, exchange ${frame.exchange}: ${error.message}`.slice(
          0,
          limit,
        ),
    });
  }
}
