// Who joined, offering what capacity, and which clients each worker hosts. Clients are dealt
// round-robin over the joined workers (in join order), each worker taking at most
// min(its capacity, maxClientsPerWorker): ids stay increasing per worker and the load even.

import { timingSafeEqual } from 'node:crypto';
import { RuntimeError } from './runtime-error.js';
import type { WorkerSession } from './worker-session.js';

export interface RegistryLimits {
  clientCount: number;
  /** the run starts once at least this many workers joined (and their capacity covers every client) */
  workersMin: number;
  maxClientsPerWorker: number;
  /** joins refused beyond this many workers */
  workersMax: number;
}

export interface LostWorker {
  workerName: string;
  clientIds: number[];
  /** the round in progress when it was lost (0: before the first) */
  round: number;
  reason: string;
}

export class WorkerRegistry {
  private readonly limits: RegistryLimits;
  private readonly joined: WorkerSession[] = [];
  private readonly hostOf = new Map<number, WorkerSession>();
  private assigned = false;
  readonly lost: LostWorker[] = [];

  constructor(limits: RegistryLimits) {
    this.limits = limits;
  }

  /** Adds a worker that passed the handshake; false when the run is already dealt or full. */
  join(session: WorkerSession): boolean {
    if (this.assigned || this.joined.length >= this.limits.workersMax) return false;
    session.moveTo('joined');
    this.joined.push(session);
    return true;
  }

  /** Drops a worker that left before the run was dealt. */
  leave(session: WorkerSession): void {
    if (this.assigned) return;
    const at = this.joined.indexOf(session);
    if (at >= 0) this.joined.splice(at, 1);
  }

  private capacityOf(session: WorkerSession): number {
    return Math.min(session.capacity, this.limits.maxClientsPerWorker);
  }

  /** Clients the joined workers can host together. */
  capacityJoined(): number {
    let total = 0;
    for (const s of this.joined) total += this.capacityOf(s);
    return total;
  }

  workersJoined(): number {
    return this.joined.length;
  }

  isReady(): boolean {
    return (
      this.joined.length >= this.limits.workersMin &&
      this.capacityJoined() >= this.limits.clientCount
    );
  }

  /** Deals every client to a worker; returns each worker's ids (ascending). */
  assign(): Map<WorkerSession, number[]> {
    if (!this.isReady()) {
      throw new RuntimeError(
        'E_NOT_ENOUGH_WORKERS',
        `${this.joined.length} workers with capacity ${this.capacityJoined()} cannot host ${this.limits.clientCount} clients`,
      );
    }
    this.assigned = true;
    const out = new Map<WorkerSession, number[]>(this.joined.map((s) => [s, []]));
    let next = 0;
    for (let clientId = 0; clientId < this.limits.clientCount; clientId++) {
      while (out.get(this.joined[next])!.length >= this.capacityOf(this.joined[next]))
        next = (next + 1) % this.joined.length;
      out.get(this.joined[next])!.push(clientId);
      this.hostOf.set(clientId, this.joined[next]);
      next = (next + 1) % this.joined.length;
    }
    for (const [session, ids] of out) {
      session.clientIds = new Set(ids);
      session.moveTo('active');
    }
    return out;
  }

  sessions(): readonly WorkerSession[] {
    return this.joined;
  }

  /** The worker hosting a client, while it is active. */
  hostOfClient(clientId: number): WorkerSession | null {
    const session = this.hostOf.get(clientId);
    return session !== undefined && session.state === 'active' ? session : null;
  }

  isClientActive(clientId: number): boolean {
    return this.hostOfClient(clientId) !== null;
  }

  /** True while the client's worker is active or disconnected (it may yet resume). */
  isClientInRun(clientId: number): boolean {
    const state = this.hostOf.get(clientId)?.state;
    return state === 'active' || state === 'disconnected';
  }

  /**
   * An active worker's connection closed: its clients sit out until it resumes or is lost.
   * Returns them (empty if it was not active).
   */
  markDisconnected(session: WorkerSession): number[] {
    if (session.state !== 'active') return [];
    session.moveTo('disconnected');
    return [...session.clientIds].sort((a, b) => a - b);
  }

  /**
   * The session `resumeToken` names, taken over by `session` (a new connection of the same
   * worker): same name, capacity and clients, and its clients active again. The session may still
   * be active when the worker saw its socket close before this end did. Null when no active or
   * disconnected session has that token (a wrong token, or its grace has passed).
   */
  resume(
    resumeToken: Uint8Array,
    session: WorkerSession,
  ): { previous: WorkerSession; previousState: 'active' | 'disconnected' } | null {
    const at = this.joined.findIndex(
      (s) =>
        (s.state === 'active' || s.state === 'disconnected') &&
        s.resumeToken !== null &&
        s.resumeToken.length === resumeToken.length &&
        timingSafeEqual(s.resumeToken, resumeToken),
    );
    if (at < 0) return null;
    const previous = this.joined[at];
    const previousState = previous.state as 'active' | 'disconnected';
    previous.moveTo('resumed');
    session.workerName = previous.workerName;
    session.capacity = previous.capacity;
    session.clientIds = previous.clientIds;
    session.resumeToken = previous.resumeToken;
    session.moveTo('active');
    this.joined[at] = session;
    for (const clientId of session.clientIds) this.hostOf.set(clientId, session);
    return { previous, previousState };
  }

  /**
   * Marks a worker lost, active or disconnected; its clients leave the run. Returns them (empty
   * if it was neither).
   */
  markLost(session: WorkerSession, round: number, reason: string): number[] {
    if (session.state !== 'active' && session.state !== 'disconnected') return [];
    session.moveTo('lost');
    const clientIds = [...session.clientIds].sort((a, b) => a - b);
    this.lost.push({ workerName: session.workerName, clientIds, round, reason });
    return clientIds;
  }

  activeSessions(): WorkerSession[] {
    return this.joined.filter((s) => s.state === 'active');
  }

  disconnectedSessions(): WorkerSession[] {
    return this.joined.filter((s) => s.state === 'disconnected');
  }
}
