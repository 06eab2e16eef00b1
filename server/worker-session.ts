// One worker's connection as the coordinator sees it: the socket, its wire meter, who it is and
// which clients it hosts, when it was last heard from. Frames go to whatever handler the
// coordinator's current phase installs (handshake, then rounds).

import type { Socket } from 'node:net';
import type { WebSocket } from 'ws';
import { encodeMessage, type Message } from '../src/protocol/index.js';
import { SessionStateMachine, type SessionState } from './session-states.js';
import { WireMeter } from './wire-meter.js';

export interface SentBytes {
  encodedBytes: number;
  wireBytes: number;
}

export type FrameHandler = (frame: Uint8Array, wireBytes: number) => void;

export class WorkerSession {
  readonly sessionId: number;
  workerName = '';
  /** clients this worker offered to host (its hello's capacity) */
  capacity = 0;
  clientIds: ReadonlySet<number> = new Set();
  /** names this worker's session in a resuming hello; null until welcomed, or when resuming is off */
  resumeToken: Uint8Array | null = null;
  lastHeardMs: number;
  private readonly ws: WebSocket;
  private readonly meter: WireMeter;
  private readonly machine = new SessionStateMachine();
  private handler: FrameHandler = () => undefined;

  constructor(sessionId: number, ws: WebSocket, socket: Socket, nowMs: number) {
    this.sessionId = sessionId;
    this.ws = ws;
    this.meter = new WireMeter(socket);
    this.lastHeardMs = nowMs;
    ws.binaryType = 'nodebuffer';
    // A text frame is not part of this protocol; it reaches the validator as bytes and fails there.
    ws.on('message', (data: Buffer) => {
      const wireBytes = this.meter.takeMessageBytes();
      this.handler(new Uint8Array(data.buffer, data.byteOffset, data.byteLength), wireBytes);
    });
  }

  get state(): SessionState {
    return this.machine.state;
  }

  /** Moves along the session state table (server/session-states.ts); throws E_SESSION_TRANSITION off it. */
  moveTo(to: SessionState): void {
    this.machine.moveTo(to);
  }

  /** A label for logs: the worker's name once known. */
  label(): string {
    return this.workerName === '' ? `connection ${this.sessionId}` : `worker "${this.workerName}"`;
  }

  onFrame(handler: FrameHandler): void {
    this.handler = handler;
  }

  onClose(listener: () => void): void {
    this.ws.once('close', listener);
  }

  isOpen(): boolean {
    return this.ws.readyState === this.ws.OPEN;
  }

  /** Encodes and sends one message as one binary frame; returns its bytes at both layers. */
  send(message: Message): SentBytes {
    if (!this.isOpen()) return { encodedBytes: 0, wireBytes: 0 };
    const bytes = encodeMessage(message);
    const wireBytes = this.meter.measureWrite(() => this.ws.send(bytes, { binary: true }));
    return { encodedBytes: bytes.byteLength, wireBytes };
  }

  wireTotals(): { readBytes: number; writtenBytes: number; controlReadBytes: number } {
    return { ...this.meter.totals(), controlReadBytes: this.meter.controlReadBytes };
  }

  /** Closes politely (close frame, then the socket). */
  close(code: number, reason: string): void {
    if (this.ws.readyState === this.ws.OPEN || this.ws.readyState === this.ws.CONNECTING) this.ws.close(code, reason);
  }

  /** Drops the connection at once (a lost or hostile peer). */
  terminate(): void {
    this.ws.terminate();
  }
}
