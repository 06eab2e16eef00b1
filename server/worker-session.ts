// One worker's connection as the coordinator sees it: the socket, its wire meter, who it is and
// which clients it hosts, when it was last heard from. Frames go to whatever handler the
// coordinator's current phase installs (handshake, then rounds).

import type { Socket } from 'node:net';
import type { WebSocket } from 'ws';
import {
  classifyFrameError,
  encodeMessage,
  frameBytes,
  type FrameFailure,
  type Message,
} from '../src/protocol/index.js';
import { SessionStateMachine, type SessionState } from './session-states.js';
import { WireMeter } from './wire-meter.js';

export interface SentBytes {
  encodedBytes: number;
  wireBytes: number;
}

export type FrameHandler = (frame: Uint8Array, wireBytes: number) => void;

/** Told of a malformed frame; ws has already closed the connection with `failure.closeCode`. */
export type FrameErrorHandler = (session: WorkerSession, failure: FrameFailure) => void;

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

  constructor(
    sessionId: number,
    ws: WebSocket,
    socket: Socket,
    nowMs: number,
    onFrameError: FrameErrorHandler,
  ) {
    this.sessionId = sessionId;
    this.ws = ws;
    this.meter = new WireMeter(socket);
    this.lastHeardMs = nowMs;
    ws.binaryType = 'nodebuffer';
    // ws emits 'error' for a frame that breaks RFC 6455 (and closes the connection itself); an
    // 'error' with no listener would end the process, so every session listens from the start.
    ws.on('error', (error) => onFrameError(this, classifyFrameError(error)));
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
    this.ws.send(bytes, { binary: true });
    // The frame's size by the RFC 6455 section 5.2 header rule (a server's frames are unmasked;
    // permessage-deflate is off): O(1) per send, where reading socket.bytesWritten would walk
    // the socket's write queue, which grows without bound when a peer stops reading.
    return { encodedBytes: bytes.byteLength, wireBytes: frameBytes(bytes.byteLength, false) };
  }

  wireTotals(): { readBytes: number; writtenBytes: number; controlReadBytes: number } {
    return { ...this.meter.totals(), controlReadBytes: this.meter.controlReadBytes };
  }

  /** Closes politely (close frame, then the socket). */
  close(code: number, reason: string): void {
    if (this.ws.readyState === this.ws.OPEN || this.ws.readyState === this.ws.CONNECTING)
      this.ws.close(code, reason);
  }

  /** Drops the connection at once (a lost or hostile peer). */
  terminate(): void {
    this.ws.terminate();
  }
}
