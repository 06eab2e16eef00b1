// One worker's connection as the coordinator sees it: the socket, its wire meter, who it is and
// which clients it hosts, when it was last heard from. Frames go to whatever handler the
// coordinator's current phase installs (handshake, then rounds).
//
// The session also holds its connection to its limits (src/protocol/limits.ts), each checked
// before a message is decoded: until the hello is accepted a data message may be no larger than
// the largest hello; after, no larger than twice the plan's frame limit (so that a frame a little
// too large still reaches the codec's size check and earns an E_SIZE reply), messages are
// rationed by PeerBudget, and the bytes queued for a peer that does not read are bounded.

import type { Socket } from 'node:net';
import type { WebSocket } from 'ws';
import {
  classifyFrameError,
  CLOSE_MESSAGE_TOO_BIG,
  CLOSE_POLICY_VIOLATION,
  encodeMessage,
  frameBytes,
  type FrameFailure,
} from '../src/protocol/index.js';
import type { LimitReason } from './limit-reasons.js';
import { PeerBudget } from './peer-budget.js';
import { SessionStateMachine, type SessionState } from './session-states.js';
import { WireMeter } from './wire-meter.js';

export interface SentBytes {
  encodedBytes: number;
  wireBytes: number;
}

/**
 * A data message, not yet decoded; `frameLimitBytes` is the largest it may be now (the codec
 * checks it first); `streamSeconds` is how long its bytes took to arrive, first to last.
 */
export type FrameHandler = (
  frame: Uint8Array,
  wireBytes: number,
  frameLimitBytes: number,
  streamSeconds: number,
) => void;

export interface SessionHooks {
  /** a malformed frame: the connection is closed with `failure.closeCode` */
  onFrameError: (session: WorkerSession, failure: FrameFailure) => void;
  /** a connection limit passed: the connection is closed (or, for a peer that does not read, dropped) */
  onLimit: (session: WorkerSession, reason: LimitReason, detail: string) => void;
}

/** What an authenticated connection is held to. */
export interface SessionLimits {
  /** largest data message accepted at all (twice the plan's frame limit) */
  payloadLimitBytes: number;
  /** largest message decoded: the plan's frame limit */
  frameLimitBytes: number;
  /** largest heartbeat or error (controlFrameBytesMax) */
  controlFrameBytesMax: number;
  /** bytes queued for the peer past which it is dropped */
  pendingBytesMax: number;
}

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
  private readonly socket: Socket;
  private readonly meter: WireMeter;
  private readonly machine = new SessionStateMachine();
  private readonly hooks: SessionHooks;
  private readonly nowMs: () => number;
  private handler: FrameHandler = () => undefined;
  /** set once the session is authenticated */
  private limits: SessionLimits | null = null;
  /** messages (and pings) this connection may send; the hello alone before authentication */
  private readonly budget: PeerBudget;
  /** the connection broke a rule and is being closed: nothing more it sends is read */
  private failed = false;

  constructor(
    sessionId: number,
    ws: WebSocket,
    socket: Socket,
    nowMs: () => number,
    helloBytesMax: number,
    hooks: SessionHooks,
  ) {
    this.sessionId = sessionId;
    this.ws = ws;
    this.socket = socket;
    this.nowMs = nowMs;
    this.hooks = hooks;
    this.meter = new WireMeter(socket, helloBytesMax, (payloadBytes, limitBytes) =>
      this.oversize(payloadBytes, limitBytes),
    );
    this.lastHeardMs = nowMs();
    this.budget = new PeerBudget(nowMs());
    ws.binaryType = 'nodebuffer';
    // ws emits 'error' for a frame that breaks RFC 6455 (and closes the connection itself); an
    // 'error' with no listener would end the process, so every session listens from the start.
    ws.on('error', (error) => {
      if (this.failed) return;
      this.failed = true;
      this.hooks.onFrameError(this, classifyFrameError(error));
    });
    // A text frame is not part of this protocol; it reaches the validator as bytes and fails there.
    ws.on('message', (data: Buffer) => this.received(data));
    // ws answers each ping with a pong by itself; a ping draws on the message budget like any
    // message, so that a peer cannot keep the coordinator writing pongs.
    ws.on('ping', () => {
      if (this.budget.admitMessage(this.nowMs(), 0, 0) === 'over-rate')
        this.passLimit('E_LIMIT_MESSAGE_RATE', 'more pings than the unsolicited rate allows');
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

  /** The underlying socket the HTTP layer handed over (under TLS, the TLS socket). */
  transport(): Socket {
    return this.socket;
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

  /** The hello was accepted: from now on the connection is held to `limits` instead of the hello's size. */
  authenticate(limits: SessionLimits): void {
    this.limits = limits;
    this.meter.setPayloadLimitBytes(limits.payloadLimitBytes);
  }

  private received(data: Buffer): void {
    const { wireBytes, streamSeconds } = this.meter.takeMessage();
    if (this.failed) return;
    const frame = new Uint8Array(data.buffer, data.byteOffset, data.byteLength);
    if (this.limits === null) {
      this.handler(frame, wireBytes, frame.byteLength, streamSeconds);
      return;
    }
    const { frameLimitBytes, controlFrameBytesMax } = this.limits;
    const admission = this.budget.admitMessage(
      this.nowMs(),
      frame.byteLength,
      controlFrameBytesMax,
    );
    if (admission === 'over-rate') {
      this.passLimit(
        'E_LIMIT_MESSAGE_RATE',
        'more messages than its downs entries and the unsolicited rate allow',
      );
      return;
    }
    // Without an entry's credit, a message larger than a heartbeat or an error fails the codec's
    // size check before any decoding.
    this.handler(
      frame,
      wireBytes,
      admission === 'uncredited' ? controlFrameBytesMax : frameLimitBytes,
      streamSeconds,
    );
  }

  /** A message failed validation: whether to answer it with an error; past the bound, the peer is dropped here. */
  shouldAnswerBadMessage(): boolean {
    if (this.limits === null) return true;
    const verdict = this.budget.badMessage(this.nowMs());
    if (verdict === 'drop') {
      this.passLimit('E_LIMIT_BAD_MESSAGES', 'more bad messages than the limit allows');
      return false;
    }
    return verdict === 'reply';
  }

  /** Encodes and sends one control message as one binary frame; returns its bytes at both layers. */
  send(message: Parameters<typeof encodeMessage>[0]): SentBytes {
    // A checkpoint request is answered with one state message per hosted client.
    return this.sendBytes(
      encodeMessage(message),
      message.type === 'checkpoint' ? this.clientIds.size : 0,
    );
  }

  /**
   * Sends an encoded downs frame of `entries` entries, each of which the worker may answer;
   * `onWritten` is called once the socket wrote it out (or failed to).
   */
  sendDowns(frame: Uint8Array, entries: number, onWritten?: () => void): SentBytes {
    return this.sendBytes(frame, entries, onWritten);
  }

  /** A valid ups frame of `entries` entries arrived: it spends a credit for each (PeerBudget). */
  upsReceived(entries: number): void {
    this.budget.spendEntries(entries);
  }

  private sendBytes(bytes: Uint8Array, grants: number, onWritten?: () => void): SentBytes {
    if (!this.isOpen() || this.failed) return { encodedBytes: 0, wireBytes: 0 };
    this.ws.send(bytes, { binary: true }, onWritten);
    if (grants > 0) this.budget.grant(grants);
    // ws's bufferedAmount reads two counters: O(1), whatever is queued.
    if (this.limits !== null && this.ws.bufferedAmount > this.limits.pendingBytesMax) {
      this.passLimit(
        'E_LIMIT_PENDING_BYTES',
        `${this.ws.bufferedAmount} bytes queued for a peer that does not read (at most ${this.limits.pendingBytesMax})`,
      );
    }
    // The frame's size by the RFC 6455 section 5.2 header rule (a server's frames are unmasked;
    // permessage-deflate is off): O(1) per send, where reading socket.bytesWritten would walk
    // the socket's write queue, which grows without bound when a peer stops reading.
    return { encodedBytes: bytes.byteLength, wireBytes: frameBytes(bytes.byteLength, false) };
  }

  wireTotals(): { readBytes: number; writtenBytes: number; controlReadBytes: number } {
    return { ...this.meter.totals(), controlReadBytes: this.meter.controlReadBytes };
  }

  /** Closes politely (close frame, then the socket; ws destroys it if the peer does not answer in time). */
  close(code: number, reason: string): void {
    if (this.ws.readyState === this.ws.OPEN || this.ws.readyState === this.ws.CONNECTING)
      this.ws.close(code, reason);
  }

  /** Drops the connection at once (a lost or hostile peer). */
  terminate(): void {
    this.ws.terminate();
  }

  /**
   * A data message past the payload limit, seen by its header: nothing more is read (ws would
   * otherwise go on buffering the payload) and the peer gets 1009 (RFC 6455 section 7.4.1).
   */
  private oversize(payloadBytes: number, limitBytes: number): void {
    if (this.failed) return;
    this.failed = true;
    this.hooks.onFrameError(this, {
      reason: 'E_FRAME_TOO_BIG',
      closeCode: CLOSE_MESSAGE_TOO_BIG,
      detail: `a message of ${payloadBytes} bytes, at most ${limitBytes} allowed ${this.limits === null ? 'before the hello is accepted' : 'on this connection'}`,
    });
    this.closeAndEnd(CLOSE_MESSAGE_TOO_BIG, 'message too big');
  }

  /**
   * A close frame, then the end of the connection as soon as it is written: nothing more is read
   * from a peer that broke a rule, so there is no answer to wait for.
   */
  private closeAndEnd(code: number, reason: string): void {
    // Paused, the socket costs nothing more however much the peer sends; ws destroys it within
    // closingDeadlineSeconds if the close frame cannot be written (a peer that does not read).
    this.socket.pause();
    this.close(code, reason);
    this.socket.end(() => this.socket.destroy());
  }

  /** A limit passed: a peer that does not read is dropped at once, any other gets a close frame first. */
  private passLimit(reason: LimitReason, detail: string): void {
    if (this.failed) return;
    this.failed = true;
    this.hooks.onLimit(this, reason, detail);
    if (reason === 'E_LIMIT_PENDING_BYTES') this.terminate();
    else this.closeAndEnd(CLOSE_POLICY_VIOLATION, reason);
  }
}
