// The wire meter splits the received byte stream into RFC 6455 frames (section 5.2: 2 header
// bytes, 2 or 8 more for payloads of 126..65535 or 65536 bytes and up, 4 for a masking key), so
// each data message is matched with the bytes it took, control frames kept apart, whatever the
// chunking of the stream.

import { EventEmitter } from 'node:events';
import type { Socket } from 'node:net';
import { describe, expect, it } from 'vitest';
import { WireMeter } from '../../server/wire-meter.js';

/** One masked frame; opcode 2 = binary, 9 = ping (section 5.2 opcodes). */
function frame(opcode: number, payloadBytes: number, fin = true): Buffer {
  const lengthBytes = payloadBytes < 126 ? 0 : payloadBytes < 65536 ? 2 : 8;
  const header = Buffer.alloc(2 + lengthBytes + 4);
  header[0] = (fin ? 0x80 : 0) | opcode;
  if (lengthBytes === 0) header[1] = 0x80 | payloadBytes;
  else if (lengthBytes === 2) {
    header[1] = 0x80 | 126;
    header.writeUInt16BE(payloadBytes, 2);
  } else {
    header[1] = 0x80 | 127;
    header.writeBigUInt64BE(BigInt(payloadBytes), 2);
  }
  return Buffer.concat([header, Buffer.alloc(payloadBytes, 7)]);
}

function fakeSocket(): Socket & EventEmitter {
  const socket = new EventEmitter() as Socket & EventEmitter;
  Object.assign(socket, { bytesRead: 0, bytesWritten: 0 });
  return socket;
}

describe('WireMeter', () => {
  it('attributes each message its frame bytes across arbitrary chunks', () => {
    const socket = fakeSocket();
    const meter = new WireMeter(socket, Number.MAX_SAFE_INTEGER, () => undefined);
    const stream = Buffer.concat([
      frame(2, 10),
      frame(9, 4),
      frame(2, 300),
      frame(2, 70_000),
      frame(2, 5, false),
      frame(0, 6),
    ]);
    for (let i = 0; i < stream.length; i += 997)
      socket.emit('data', stream.subarray(i, Math.min(stream.length, i + 997)));
    expect([1, 2, 3, 4].map(() => meter.takeMessage().wireBytes)).toEqual([
      2 + 4 + 10,
      2 + 2 + 4 + 300,
      2 + 8 + 4 + 70_000,
      2 + 4 + 5 + (2 + 4 + 6),
    ]);
    expect(meter.controlReadBytes).toBe(2 + 4 + 4);
  });

  it('times each message from the read with its first byte to the read with its last', () => {
    const socket = fakeSocket();
    let nowMs = 0;
    const meter = new WireMeter(
      socket,
      Number.MAX_SAFE_INTEGER,
      () => undefined,
      () => nowMs,
    );
    const message = frame(2, 3000);
    const read = (ms: number, bytes: Buffer) => {
      nowMs = ms;
      socket.emit('data', bytes);
    };
    // A ping alone before the message starts no message of its own.
    read(50, frame(9, 4));
    read(100, message.subarray(0, 1000));
    read(250, message.subarray(1000, 2000));
    // The message's last bytes and the next message's first share a read.
    read(400, Buffer.concat([message.subarray(2000), frame(2, 10)]));
    const first = meter.takeMessage();
    expect(first.wireBytes).toBe(message.length);
    expect(first.streamSeconds).toBeCloseTo(0.3, 12);
    // a message within one read took no measurable time
    expect(meter.takeMessage()).toEqual({ wireBytes: 2 + 4 + 10, streamSeconds: 0 });
  });
});
