// A session meters each send from the frame it writes (RFC 6455 section 5.2 header: 2 bytes,
// +2 for a payload of 126..65535 bytes, +8 above; a server's frames are unmasked), without
// touching the socket's bytesWritten, whose read walks the whole write queue of a peer that
// stopped reading. A connection's 'error' (a malformed frame) reaches the session's handler.

import { EventEmitter } from 'node:events';
import type { Socket } from 'node:net';
import type { WebSocket } from 'ws';
import { describe, expect, it } from 'vitest';
import { encodeMessage, type FrameFailure, type Message } from '../../src/protocol/index.js';
import { WorkerSession, type SessionHooks } from '../../server/worker-session.js';

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
  const sent: Uint8Array[] = [];
  const ws = new EventEmitter() as WebSocket & EventEmitter;
  Object.assign(ws, {
    OPEN: 1,
    CONNECTING: 0,
    readyState: 1,
    send: (bytes: Uint8Array) => sent.push(bytes),
  });
  return { socket, ws, sent, bytesWrittenReads: () => reads };
}

const NO_HOOKS: SessionHooks = { onFrameError: () => undefined, onLimit: () => undefined };

describe('WorkerSession', () => {
  it('meters each send by its frame size, never reading socket.bytesWritten', () => {
    const { socket, ws, sent, bytesWrittenReads } = fakeConnection();
    const session = new WorkerSession(1, ws, socket, () => 0, 1024, NO_HOOKS);
    const readsAtStart = bytesWrittenReads();
    // Error messages with texts of 0, 200 and 70 000 characters: each header form once.
    const messages: Message[] = [0, 200, 70_000].map((n) => ({
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
});
