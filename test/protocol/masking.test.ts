// A worker masks every frame it sends (RFC 6455 section 5.3) with whichever masking code ws
// loaded: the optional native bufferutil where it is installed, ws's JavaScript loop where it is
// not. Either way the bytes on the socket must be the payload XOR the frame's masking key, byte j
// with key byte j mod 4, and the coordinator must read the payload back unchanged. The key is
// fixed here (ws's generateMask option) so that the bytes can be checked.

import type { Socket } from 'node:net';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { WebSocket, WebSocketServer } from 'ws';
import { frameHeaderBytes } from '../../src/protocol/framing.js';

/** The masking key of the RFC 6455 section 5.7 examples. */
const MASKING_KEY = [0x37, 0xfa, 0x21, 0x3d];

describe('client frames masked per RFC 6455 section 5.3 on a real ws pair on 127.0.0.1', () => {
  let server: WebSocketServer;
  let client: WebSocket;
  const onWire: Buffer[] = [];
  const received: Buffer[] = [];

  beforeAll(async () => {
    server = new WebSocketServer({ host: '127.0.0.1', port: 0, perMessageDeflate: false });
    await new Promise<void>((resolve) => server.once('listening', resolve));
    const port = (server.address() as { port: number }).port;
    const connected = new Promise<void>((resolve) => {
      server.once('connection', (ws, request) => {
        // Copied ahead of ws's own listener, which unmasks a small frame in place in the chunk.
        (request.socket as Socket).prependListener('data', (chunk: Buffer) =>
          onWire.push(Buffer.from(chunk)),
        );
        ws.on('message', (data) => received.push(data as Buffer));
        resolve();
      });
    });
    client = new WebSocket(`ws://127.0.0.1:${port}`, {
      perMessageDeflate: false,
      generateMask: (mask: Buffer) => {
        mask.set(MASKING_KEY);
      },
    });
    await Promise.all([connected, new Promise<void>((resolve) => client.once('open', resolve))]);
  });

  afterAll(async () => {
    const closed = new Promise<void>((resolve) => client.once('close', () => resolve()));
    client.close();
    await closed;
    await new Promise<void>((resolve, reject) =>
      server.close((error) => (error ? reject(error) : resolve())),
    );
  });

  async function sent(payload: Buffer | string): Promise<{ frame: Buffer; message: Buffer }> {
    onWire.length = 0;
    const count = received.length;
    client.send(payload, { binary: typeof payload !== 'string' });
    const deadlineMs = Date.now() + 5000;
    while (received.length === count) {
      if (Date.now() > deadlineMs) throw new Error('no message within 5 s');
      await new Promise((resolve) => setTimeout(resolve, 1));
    }
    return { frame: Buffer.concat(onWire), message: received[count] };
  }

  it('sends the masked "Hello" of RFC 6455 section 5.7 byte for byte', async () => {
    const { frame, message } = await sent('Hello');
    expect([...frame]).toEqual([0x81, 0x85, 0x37, 0xfa, 0x21, 0x3d, 0x7f, 0x9f, 0x4d, 0x51, 0x58]);
    expect(message.toString('utf8')).toBe('Hello');
  });

  it('masks a 4 MiB binary frame (an ups frame of 500 clients at d = 1,000) byte j with key byte j mod 4', async () => {
    const length = 4 * 1024 * 1024;
    const payload = Buffer.alloc(length);
    for (let j = 0; j < length; j++) payload[j] = (j * 131 + (j >> 8)) & 0xff;
    const { frame, message } = await sent(payload);
    const headerBytes = frameHeaderBytes(length, true);
    expect(frame.length).toBe(headerBytes + length);
    expect([...frame.subarray(headerBytes - 4, headerBytes)]).toEqual(MASKING_KEY);
    const masked = frame.subarray(headerBytes);
    let mismatches = 0;
    for (let j = 0; j < length; j++)
      if (masked[j] !== (payload[j] ^ MASKING_KEY[j & 3])) mismatches++;
    expect(mismatches).toBe(0);
    expect(message.equals(payload)).toBe(true);
  });
});
