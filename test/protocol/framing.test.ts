import type { Socket } from 'node:net';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { WebSocket, WebSocketServer } from 'ws';
import { frameBytes, frameHeaderBytes } from '../../src/protocol/framing.js';
import { encodeSample, sampleMessages } from './sample-messages.js';

describe('frameHeaderBytes (RFC 6455 section 5.2)', () => {
  it('matches the payload-length rules at every boundary, masked and not', () => {
    // 7-bit length up to 125; 126 announces a 16-bit length; 127 a 64-bit one; +4 mask key.
    const cases: [number, number, number][] = [
      [0, 2, 6],
      [125, 2, 6],
      [126, 4, 8],
      [65_535, 4, 8],
      [65_536, 10, 14],
      [2 ** 32, 10, 14],
    ];
    for (const [length, unmasked, masked] of cases) {
      expect(frameHeaderBytes(length, false)).toBe(unmasked);
      expect(frameHeaderBytes(length, true)).toBe(masked);
      expect(frameBytes(length, true)).toBe(masked + length);
    }
  });

  it('matches the examples of RFC 6455 section 5.7', () => {
    // "Hello", unmasked: 0x81 0x05 then 5 bytes; masked: 0x81 0x85, 4 key bytes, 5 bytes.
    expect(frameHeaderBytes(5, false)).toBe(2);
    expect(frameHeaderBytes(5, true)).toBe(6);
    // 256 bytes binary, unmasked: 0x82 0x7E 0x0100.
    expect(frameHeaderBytes(256, false)).toBe(4);
    // 64 KiB binary, unmasked: 0x82 0x7F 0x0000000000010000.
    expect(frameHeaderBytes(65_536, false)).toBe(10);
  });

  it('refuses negative or fractional lengths', () => {
    expect(() => frameHeaderBytes(-1, false)).toThrow(RangeError);
    expect(() => frameHeaderBytes(1.5, false)).toThrow(RangeError);
  });
});

describe('frameHeaderBytes against a real ws pair on 127.0.0.1', () => {
  let server: WebSocketServer;
  let client: WebSocket;
  let serverSide: WebSocket;
  let serverSocket: Socket;
  let clientSocket: Socket;
  const received: { server: Buffer[]; client: Buffer[] } = { server: [], client: [] };

  beforeAll(async () => {
    server = new WebSocketServer({ host: '127.0.0.1', port: 0, perMessageDeflate: false });
    await new Promise<void>((resolve) => server.once('listening', resolve));
    const port = (server.address() as { port: number }).port;
    const connected = new Promise<void>((resolve) => {
      server.once('connection', (ws, request) => {
        serverSide = ws;
        serverSocket = request.socket as Socket;
        ws.on('message', (data) => received.server.push(data as Buffer));
        resolve();
      });
    });
    client = new WebSocket(`ws://127.0.0.1:${port}`, { perMessageDeflate: false });
    client.once('upgrade', (response) => {
      clientSocket = response.socket as Socket;
    });
    client.on('message', (data) => received.client.push(data as Buffer));
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

  async function until(check: () => boolean): Promise<void> {
    const deadlineMs = Date.now() + 5000;
    while (!check()) {
      if (Date.now() > deadlineMs) throw new Error('no message within 5 s');
      await new Promise((resolve) => setTimeout(resolve, 1));
    }
  }

  // The RFC's boundaries, then real encoded messages as the runtime will send them.
  const payloads: Uint8Array[] = [
    ...[0, 125, 126, 65_535, 65_536].map((length) => new Uint8Array(length).fill(7)),
    ...sampleMessages().map(encodeSample),
  ];

  it('client -> server: masked frames, counted on both sockets', async () => {
    for (const payload of payloads) {
      const length = payload.length;
      const written = clientSocket.bytesWritten;
      const read = serverSocket.bytesRead;
      const count = received.server.length;
      client.send(payload, { binary: true });
      await until(() => received.server.length > count);
      expect(received.server[count].length).toBe(length);
      expect(clientSocket.bytesWritten - written).toBe(length + frameHeaderBytes(length, true));
      expect(serverSocket.bytesRead - read).toBe(length + frameHeaderBytes(length, true));
    }
  });

  it('server -> client: unmasked frames, counted on both sockets', async () => {
    for (const payload of payloads) {
      const length = payload.length;
      const written = serverSocket.bytesWritten;
      const read = clientSocket.bytesRead;
      const count = received.client.length;
      serverSide.send(payload, { binary: true });
      await until(() => received.client.length > count);
      expect(received.client[count].length).toBe(length);
      expect(serverSocket.bytesWritten - written).toBe(length + frameHeaderBytes(length, false));
      expect(clientSocket.bytesRead - read).toBe(length + frameHeaderBytes(length, false));
    }
  });
});
