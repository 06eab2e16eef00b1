// Connections that have not yet passed their hello: each gets one deadline from its TCP accept
// (covering the TLS handshake, the HTTP upgrade and the hello alike), and at most
// `unauthenticatedMax` are held at once. Past that cap a new connection evicts the oldest
// unauthenticated one rather than being refused: a resuming worker cannot be told from junk
// until its hello arrives, so no slot can be kept for it at accept time; eviction lets any new
// connection in, so idle connections, however many, delay a worker by no more than a handshake.
// Authenticated workers leave the gate and are never counted.
//
// A connection is known by its peer's address and port, which the TCP socket and, under TLS,
// the TLS socket wrapping it both report: the HTTP layer hands over the one, accept sees the other.

import type { Socket } from 'node:net';
import type { LimitReason } from './limit-reasons.js';

export interface ConnectionGateOptions {
  deadlineSeconds: number;
  unauthenticatedMax: number;
  /** told of each connection the gate drops, after it was destroyed */
  onDropped: (reason: LimitReason, peer: string) => void;
}

interface Pending {
  socket: Socket;
  timer: NodeJS.Timeout;
}

function peerOf(socket: Socket): string | null {
  if (socket.remoteAddress === undefined || socket.remotePort === undefined) return null;
  return `${socket.remoteAddress} port ${socket.remotePort}`;
}

export class ConnectionGate {
  private readonly options: ConnectionGateOptions;
  /** by peer, oldest first (a Map keeps insertion order) */
  private readonly pending = new Map<string, Pending>();

  constructor(options: ConnectionGateOptions) {
    if (!Number.isSafeInteger(options.unauthenticatedMax) || options.unauthenticatedMax < 1)
      throw new RangeError(
        `unauthenticatedMax: a positive integer expected, got ${options.unauthenticatedMax}`,
      );
    if (!(options.deadlineSeconds > 0) || !Number.isFinite(options.deadlineSeconds))
      throw new RangeError(
        `deadlineSeconds: finite seconds above 0 expected, got ${options.deadlineSeconds}`,
      );
    this.options = options;
  }

  /** A fresh TCP connection: counted and given its deadline; the oldest one goes if the gate is full. */
  admit(socket: Socket): void {
    const peer = peerOf(socket);
    if (peer === null) {
      socket.destroy();
      return;
    }
    while (this.pending.size >= this.options.unauthenticatedMax) {
      const [oldest] = this.pending.keys();
      this.drop(oldest, 'E_LIMIT_UNAUTHENTICATED');
    }
    const timer = setTimeout(
      () => this.drop(peer, 'E_LIMIT_HANDSHAKE_DEADLINE'),
      this.options.deadlineSeconds * 1000,
    );
    this.pending.set(peer, { socket, timer });
    socket.once('close', () => {
      if (this.pending.get(peer)?.socket === socket) this.forget(peer);
    });
  }

  /** The connection's hello was accepted: no longer counted, no deadline. False if the gate had dropped it. */
  authenticated(socket: Socket): boolean {
    const peer = peerOf(socket);
    if (peer === null || !this.pending.has(peer)) return false;
    this.forget(peer);
    return true;
  }

  /** Connections held now that have not passed their hello. */
  unauthenticatedCount(): number {
    return this.pending.size;
  }

  /** Stops every deadline (the listener is closing and destroys the sockets itself). */
  close(): void {
    for (const peer of [...this.pending.keys()]) this.forget(peer);
  }

  private forget(peer: string): void {
    const entry = this.pending.get(peer);
    if (entry === undefined) return;
    clearTimeout(entry.timer);
    this.pending.delete(peer);
  }

  private drop(peer: string, reason: LimitReason): void {
    const entry = this.pending.get(peer);
    if (entry === undefined) return;
    this.forget(peer);
    entry.socket.destroy();
    this.options.onDropped(reason, peer);
  }
}
