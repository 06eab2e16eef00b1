// What the connection-hardening tests share: raw WebSocket frames written by hand (RFC 6455
// section 5), raw TCP connections that upgrade and then send whatever a test likes, an
// authenticated peer on a real ws client, and the comparison of a distributed run's records
// with the in-process engine's on the scenario that run resolved.

import { createHash, randomBytes } from 'node:crypto';
import { connect, type Socket } from 'node:net';
import { readFileSync } from 'node:fs';
import { join } from 'node:path';
import WebSocket from 'ws';
import { expect } from 'vitest';
import {
  decodeMessage,
  encodeMessage,
  proveKey,
  PROTOCOL_VERSION,
} from '../../src/protocol/index.js';
import { loadScenarioFile } from '../../src/scenario/load-scenario.js';
import { runInProcessInto } from '../../src/commands/run-report.js';
import { resultFiles } from '../../src/results/results-folder.js';
import type { ClientRoundRecord, RoundRecord } from '../../src/engine/round-record.js';
import { freshDir, readJsonLines } from './cli-process.js';
import type { ClientRuntime, EncodedFields } from '../../src/engine/client-runtime.js';
import {
  fromWire,
  HANDSHAKE_LIMITS,
  toWire,
  validateMessage,
  type DownEntry,
  type DownsFrame,
  type FieldDims,
  type FrameElements,
  type UpEntry,
  type WireFields,
} from '../../src/protocol/index.js';

/** RFC 6455 section 5.2 opcodes and bits. */
export const OP = { continuation: 0x0, text: 0x1, binary: 0x2, close: 0x8, ping: 0x9 } as const;
export const FIN = 0x80;
export const RSV1 = 0x40;
export const MASK_BIT = 0x80;

/** The GUID a server appends to the key for Sec-WebSocket-Accept (RFC 6455 section 1.3). */
const WEBSOCKET_GUID = '258EAFA5-E914-47DA-95CA-C5AB0DC85B11';

/** An HTTP upgrade request (RFC 6455 section 4.1) and the Sec-WebSocket-Accept it must get back. */
export function upgradeRequest(port: number): { request: string; accept: string } {
  const key = randomBytes(16).toString('base64');
  return {
    request: `GET / HTTP/1.1\r\nHost: 127.0.0.1:${port}\r\nUpgrade: websocket\r\nConnection: Upgrade\r\nSec-WebSocket-Key: ${key}\r\nSec-WebSocket-Version: 13\r\n\r\n`,
    accept: createHash('sha1')
      .update(key + WEBSOCKET_GUID)
      .digest('base64'),
  };
}

/** A client frame with `payload`, its length in the shortest header form; masked (section 5.3) unless told. */
export function frame(firstByte: number, payload: Uint8Array, masked = true): Buffer {
  const mask = masked ? randomBytes(4) : Buffer.alloc(0);
  const lengthBytes = payload.length < 126 ? 0 : payload.length < 65536 ? 2 : 8;
  const header = Buffer.alloc(2 + lengthBytes);
  header[0] = firstByte;
  const maskBit = masked ? MASK_BIT : 0;
  if (lengthBytes === 0) header[1] = maskBit | payload.length;
  else if (lengthBytes === 2) {
    header[1] = maskBit | 126;
    header.writeUInt16BE(payload.length, 2);
  } else {
    header[1] = maskBit | 127;
    header.writeBigUInt64BE(BigInt(payload.length), 2);
  }
  const body = Buffer.from(payload);
  if (masked) for (let i = 0; i < body.length; i++) body[i] ^= mask[i % 4];
  return Buffer.concat([header, mask, body]);
}

/** A masked binary header claiming `payloadBytes` (64-bit length form), with no payload after it. */
export function lengthClaim(payloadBytes: bigint): Buffer {
  const header = Buffer.alloc(2 + 8 + 4);
  header[0] = FIN | OP.binary;
  header[1] = MASK_BIT | 127;
  header.writeBigUInt64BE(payloadBytes, 2);
  return header;
}

/**
 * A TCP connection to `port` that writes `bytes` at once (an upgrade request and frames, say)
 * and resolves with what it received once the server closes it, or after `holdMs` (then it is
 * destroyed here, and `closedByServer` is false).
 */
export function rawConnection(
  port: number,
  bytes: Buffer,
  holdMs: number,
): Promise<{ received: Buffer; closedByServer: boolean }> {
  return new Promise((resolve) => {
    const socket: Socket = connect(port, '127.0.0.1');
    const chunks: Buffer[] = [];
    let closedByServer = true;
    const timer = setTimeout(() => {
      closedByServer = false;
      socket.destroy();
    }, holdMs);
    socket.on('error', () => undefined);
    socket.on('data', (chunk: Buffer) => chunks.push(chunk));
    socket.once('connect', () => socket.write(bytes));
    socket.once('close', () => {
      clearTimeout(timer);
      resolve({ received: Buffer.concat(chunks), closedByServer });
    });
  });
}

/** The close code of the server's close frame in `received` (after the 101 response), or null. */
export function closeCodeIn(received: Buffer): number | null {
  let i = received.indexOf('\r\n\r\n');
  if (i < 0) return null;
  i += 4;
  while (i + 2 <= received.length) {
    const lengthCode = received[i + 1] & 0x7f;
    const extended = lengthCode === 126 ? 2 : lengthCode === 127 ? 8 : 0;
    if (i + 2 + extended > received.length) return null;
    const length =
      extended === 0
        ? lengthCode
        : extended === 2
          ? received.readUInt16BE(i + 2)
          : Number(received.readBigUInt64BE(i + 2));
    const start = i + 2 + extended;
    if ((received[i] & 0x0f) === OP.close && length >= 2 && start + 2 <= received.length)
      return received.readUInt16BE(start);
    i = start + length;
  }
  return null;
}

const READ_LIMIT_BYTES = 64 * 1024 * 1024;

/** A ws client that answered the challenge with a valid hello; `messages` is what it got since. */
export interface AuthenticatedPeer {
  ws: WebSocket;
  messages: Record<string, unknown>[];
  closed: Promise<number>;
}

/** Connects and sends a hello proving `key`, as a worker named `name` offering `capacity`. */
export function authenticate(
  url: string,
  key: string,
  name: string,
  capacity: number,
): Promise<AuthenticatedPeer> {
  return new Promise((resolve, reject) => {
    const ws = new WebSocket(url, { perMessageDeflate: false });
    const messages: Record<string, unknown>[] = [];
    const closed = new Promise<number>((r) => ws.once('close', (code) => r(code)));
    ws.on('error', () => undefined);
    ws.on('message', (data: Buffer) => {
      const message = decodeMessage(new Uint8Array(data), READ_LIMIT_BYTES) as Record<
        string,
        unknown
      >;
      if (message.type !== 'challenge') {
        messages.push(message);
        return;
      }
      ws.send(
        encodeMessage({
          type: 'hello',
          protocolVersion: PROTOCOL_VERSION,
          workerName: name,
          capacity,
          proof: proveKey(key, message.nonce as Uint8Array),
        }),
        { binary: true },
      );
      resolve({ ws, messages, closed });
    });
    ws.once('unexpected-response', () => reject(new Error('the upgrade was refused')));
    void closed.then(() => reject(new Error('closed before the challenge')));
  });
}

/** A record as JSON holds it, without the wall clock and the layers only a network has. */
function comparable<T extends RoundRecord | ClientRoundRecord>(record: T): unknown {
  const copy = JSON.parse(JSON.stringify(record)) as Record<string, unknown> & {
    bytes: Record<string, unknown>;
  };
  delete copy.wallSeconds;
  delete copy.bytes.encoded;
  delete copy.bytes.wire;
  return copy;
}

/**
 * The run in `out` wrote the model, rounds and clients the in-process engine writes for the
 * scenario it resolved: model.f64 byte for byte, and every record (as same-model.test.ts
 * compares them: wall seconds aside, and the encoded and wire layers only a network has).
 */
export function expectRecordsOfCleanRun(out: string): void {
  const clean = freshDir('clean-run');
  runInProcessInto(loadScenarioFile(join(out, resultFiles.resolvedScenario)), clean);
  expect(
    readFileSync(join(out, resultFiles.modelBinary)).equals(
      readFileSync(join(clean, resultFiles.modelBinary)),
    ),
  ).toBe(true);
  expect(readJsonLines<RoundRecord>(join(out, resultFiles.rounds)).map(comparable)).toEqual(
    readJsonLines<RoundRecord>(join(clean, resultFiles.rounds)).map(comparable),
  );
  expect(readJsonLines<ClientRoundRecord>(join(out, resultFiles.clients)).map(comparable)).toEqual(
    readJsonLines<ClientRoundRecord>(join(clean, resultFiles.clients)).map(comparable),
  );
}

/**
 * The up an honest worker answers `entry` of a downs frame with: its client's runtime works the
 * down (the frame's common fields and the entry's own), timings zero.
 */
export function honestUpEntry(
  runtimes: ReadonlyMap<number, ClientRuntime>,
  frame: DownsFrame,
  entry: DownEntry,
): UpEntry {
  const encodedDown: EncodedFields = {};
  for (const [name, wv] of Object.entries({ ...frame.common, ...entry.fields }))
    encodedDown[name] = fromWire(wv);
  const result = runtimes
    .get(entry.clientId)!
    .work(frame.round, frame.exchange, encodedDown, entry.localSteps, entry.stepSize);
  const fields: WireFields = {};
  for (const [name, cv] of Object.entries(result.encodedUp)) fields[name] = toWire(cv);
  return {
    clientId: entry.clientId,
    fields,
    localSteps: result.stepsTaken,
    computeSeconds: 0,
    waitSeconds: 0,
    transferSeconds: 0,
  };
}

/** A downs frame from the coordinator, validated as a worker reads it (any round, exchange and client). */
export function readDownsFrame(
  raw: FrameElements,
  fieldDims: FieldDims,
  maxVectorDim: number,
): DownsFrame {
  return validateMessage(raw, {
    limits: { ...HANDSHAKE_LIMITS, maxVectorDim },
    expectedTypes: ['downs'],
    expectedRound: null,
    expectedExchange: null,
    ownedClientIds: null,
    fieldDims,
    auth: null,
  }) as DownsFrame;
}
