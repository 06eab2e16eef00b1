// A session meters each send from the frame it writes (RFC 6455 section 5.2 header: 2 bytes,
// +2 for a payload of 126..65535 bytes, +8 above; a server's frames are unmasked), without
// touching the socket's bytesWritten, whose read walks the whole write queue of a peer that
// stopped reading. A connection's 'error' (a malformed frame) reaches the session's handler.
// Its limits: a data message past the hello's size is refused by its header before
// authentication, the plan's after; a flood past the message budget, and a peer that lets
// replies pile up unread, are dropped.

import { EventEmitter } from 'node:events';
import type { Socket } from 'node:net';
import type { WebSocket } from 'ws';
import { describe, expect, it } from 'vitest';
import {
  CONNECTION_LIMITS,
  encodeMessage,
  type FrameFailure,
  type ControlMessage,
} from '../../src/protocol/index.js';
import {
  WorkerSession,
  type SessionHooks,
  type SessionLimits,
} from '../../server/worker-session.js';

/** A socket that counts reads of bytesWritten, and a ws that records what it was asked to send. */
function fakeConnection(): {
  socket: Socket;
  ws: WebSocket & EventEmitter;
  sent: Uint8Array[];
  bytesWrittenReads: () => number;
} {
  let reads = 0;
  const socket = new EventEmitter() as Socket & EventEmitter;
  Object.defineProperty(socket, 'bytesRead', { value: 0 });
  Object.defineProperty(socket, 'bytesWritten', {
    get: () => {
      reads += 1;
      return 0;
    },
  });
  Object.assign(socket, {
    ended: false,
    end() {
      (socket as unknown as { ended: boolean }).ended = true;
      return socket;
    },
    paused: false,
    pause() {
      (socket as unknown as { paused: boolean }).paused = true;
      return socket;
    },
  });
  const sent: Uint8Array[] = [];
  const ws = new EventEmitter() as WebSocket & EventEmitter;
  Object.assign(ws, {
    OPEN: 1,
    CONNECTING: 0,
    readyState: 1,
    bufferedAmount: 0,
    closedWith: null,
    terminated: false,
    send: (bytes: Uint8Array) => sent.push(bytes),
    close: (code: number) => Object.assign(ws, { closedWith: code, readyState: 2 }),
    terminate: () => Object.assign(ws, { terminated: true, readyState: 3 }),
  });
  return { socket, ws, sent, bytesWrittenReads: () => reads };
}

/** A masked binary frame header (RFC 6455 section 5.2) announcing `payloadBytes`, 64-bit length form. */
function binaryHeader(payloadBytes: number): Buffer {
  const header = Buffer.alloc(14);
  header[0] = 0x82;
  header[1] = 0x80 | 127;
  header.writeBigUInt64BE(BigInt(payloadBytes), 2);
  return header;
}

const LIMITS: SessionLimits = {
  payloadLimitBytes: 200_000,
  frameLimitBytes: 100_000,
  controlFrameBytesMax: 3_000,
  pendingBytesMax: 1_000_000,
};

const NO_HOOKS: SessionHooks = { onFrameError: () => undefined, onLimit: () => undefined };

describe('WorkerSession', () => {
  it('meters each send by its frame size, never reading socket.bytesWritten', () => {
    const { socket, ws, sent, bytesWrittenReads } = fakeConnection();
    const session = new WorkerSession(1, ws, socket, () => 0, 1024, NO_HOOKS);
    const readsAtStart = bytesWrittenReads();
    // Error messages with texts of 0, 200 and 70 000 characters: each header form once.
    const messages: ControlMessage[] = [0, 200, 70_000].map((n) => ({
      type: 'error',
      code: 'E_DECODE',
      message: 'x'.repeat(n),
    }));
    for (let i = 0; i < 1000; i++) {
      for (const message of messages) {
        const encodedBytes = encodeMessage(message).byteLength;
        const header = encodedBytes < 126 ? 2 : encodedBytes < 65536 ? 4 : 10;
        expect(session.send(message)).toEqual({ encodedBytes, wireBytes: encodedBytes + header });
      }
    }
    expect(sent).toHaveLength(3000);
    expect(bytesWrittenReads()).toBe(readsAtStart);
  });

  it("hands a connection's error to the handler, classified", () => {
    const { socket, ws } = fakeConnection();
    const failures: FrameFailure[] = [];
    new WorkerSession(1, ws, socket, () => 0, 1024, {
      ...NO_HOOKS,
      onFrameError: (_, failure) => failures.push(failure),
    });
    ws.emit(
      'error',
      Object.assign(new RangeError('Invalid WebSocket frame: invalid UTF-8 sequence'), {
        code: 'WS_ERR_INVALID_UTF8',
      }),
    );
    // RFC 6455 section 7.4.1: 1007 for data inconsistent with the message's type.
    expect(failures).toEqual([
      {
        reason: 'E_FRAME_UTF8',
        closeCode: 1007,
        detail: 'Invalid WebSocket frame: invalid UTF-8 sequence',
      },
    ]);
  });

  it('refuses a data message past the hello size by its header: reading stops, the peer gets 1009', () => {
    const { socket, ws } = fakeConnection();
    const failures: FrameFailure[] = [];
    new WorkerSession(1, ws, socket, () => 0, 600, {
      ...NO_HOOKS,
      onFrameError: (_, failure) => failures.push(failure),
    });
    // 4 MiB announced; not one payload byte sent.
    socket.emit('data', binaryHeader(4 * 1024 * 1024));
    expect(failures.map((f) => [f.reason, f.closeCode])).toEqual([['E_FRAME_TOO_BIG', 1009]]);
    expect((socket as unknown as { paused: boolean }).paused).toBe(true);
    expect((ws as unknown as { closedWith: number }).closedWith).toBe(1009);
  });

  it("raises the payload limit to the plan's once authenticated", () => {
    const { socket, ws } = fakeConnection();
    const failures: FrameFailure[] = [];
    const session = new WorkerSession(1, ws, socket, () => 0, 600, {
      ...NO_HOOKS,
      onFrameError: (_, failure) => failures.push(failure),
    });
    session.authenticate(LIMITS);
    socket.emit('data', binaryHeader(LIMITS.payloadLimitBytes));
    expect(failures).toEqual([]);
  });

  it('drops a peer past the message rate, reading nothing more from it', () => {
    const { socket, ws } = fakeConnection();
    const limits: string[] = [];
    const handled: number[] = [];
    const session = new WorkerSession(1, ws, socket, () => 0, 600, {
      ...NO_HOOKS,
      onLimit: (_, reason) => limits.push(reason),
    });
    session.authenticate(LIMITS);
    session.onFrame((frame) => handled.push(frame.byteLength));
    for (let i = 0; i < 1000; i++) ws.emit('message', Buffer.alloc(1));
    expect(handled).toHaveLength(CONNECTION_LIMITS.unsolicitedMessagesBurst);
    expect(limits).toEqual(['E_LIMIT_MESSAGE_RATE']);
    expect((ws as unknown as { closedWith: number }).closedWith).toBe(1008);
  });

  it("holds a large message without an entry to answer to the control size, and one per entry of a downs frame to the plan's", () => {
    const { socket, ws } = fakeConnection();
    const frameLimits: number[] = [];
    const session = new WorkerSession(1, ws, socket, () => 0, 600, NO_HOOKS);
    session.authenticate(LIMITS);
    session.onFrame((_, __, frameLimitBytes) => frameLimits.push(frameLimitBytes));
    ws.emit('message', Buffer.alloc(50_000));
    // A downs frame of two entries: two large messages may answer it (wall clock: one ups frame
    // per client at worst), the third may not.
    session.sendDowns(new Uint8Array(16), 2);
    for (let i = 0; i < 3; i++) ws.emit('message', Buffer.alloc(50_000));
    expect(frameLimits).toEqual([
      LIMITS.controlFrameBytesMax,
      LIMITS.frameLimitBytes,
      LIMITS.frameLimitBytes,
      LIMITS.controlFrameBytesMax,
    ]);
  });

  it('drops a peer that does not read once the bytes queued for it pass the bound', () => {
    const { socket, ws } = fakeConnection();
    const limits: string[] = [];
    const session = new WorkerSession(1, ws, socket, () => 0, 600, {
      ...NO_HOOKS,
      onLimit: (_, reason) => limits.push(reason),
    });
    session.authenticate(LIMITS);
    const heartbeat: ControlMessage = { type: 'heartbeat', sentAtMs: 0 };
    Object.assign(ws, { bufferedAmount: LIMITS.pendingBytesMax });
    session.send(heartbeat);
    expect(limits).toEqual([]);
    Object.assign(ws, { bufferedAmount: LIMITS.pendingBytesMax + 1 });
    session.send(heartbeat);
    expect(limits).toEqual(['E_LIMIT_PENDING_BYTES']);
    expect((ws as unknown as { terminated: boolean }).terminated).toBe(true);
  });
});
