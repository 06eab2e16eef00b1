// A peer that breaks WebSocket framing (RFC 6455 section 5) loses its own connection and nothing
// else. Against a real coordinator process with two honest worker processes: raw TCP connections
// do the HTTP upgrade by hand and send one malformed frame each, before a hello, after a valid
// hello, and during the run. Each such connection gets a close frame with the RFC 6455 section
// 7.4.1 code its violation calls for and is closed; the coordinator counts each under its reason,
// keeps running, exits 0, and its final model is the clean in-process run's, bit for bit.

import { createHash, randomBytes } from 'node:crypto';
import { connect, type Socket } from 'node:net';
import { readFileSync } from 'node:fs';
import { join } from 'node:path';
import { afterEach, describe, expect, it } from 'vitest';
import {
  CLOSE_INVALID_PAYLOAD,
  CLOSE_MESSAGE_TOO_BIG,
  CLOSE_PROTOCOL_ERROR,
  decodeMessage,
  encodeMessage,
  proveKey,
  PROTOCOL_VERSION,
  type FrameErrorReason,
} from '../../src/protocol/index.js';
import { runInProcess } from '../../src/engine/in-process-engine.js';
import { loadScenarioFile } from '../../src/scenario/load-scenario.js';
import {
  CliProcess,
  freshDir,
  repoRoot,
  writeKeyFile,
  quickstartCoordinatorArgs,
  honestWorkers,
} from './cli-process.js';

const KEY = 'a-key-for-the-malformed-frames-test';
// Enough rounds that the mid-run probes land while the run goes on.
const TWEAKS = ['run.rounds:60', 'run.target:0'];
/** The GUID a server appends to the key for Sec-WebSocket-Accept (RFC 6455 section 1.3). */
const WEBSOCKET_GUID = '258EAFA5-E914-47DA-95CA-C5AB0DC85B11';
const READ_LIMIT_BYTES = 1024 * 1024;
const PROBE_TIMEOUT_MS = 5_000;

/** RFC 6455 section 5.2 opcodes. */
const OP = { continuation: 0x0, text: 0x1, binary: 0x2, close: 0x8, ping: 0x9 } as const;
const FIN = 0x80;
const RSV1 = 0x40;
const MASK_BIT = 0x80;

/** A masked client frame (section 5.3) with `payload`, its length in the shortest header form. */
function maskedFrame(firstByte: number, payload: Uint8Array): Buffer {
  const mask = randomBytes(4);
  const lengthBytes = payload.length < 126 ? 0 : payload.length < 65536 ? 2 : 8;
  const header = Buffer.alloc(2 + lengthBytes);
  header[0] = firstByte;
  if (lengthBytes === 0) header[1] = MASK_BIT | payload.length;
  else if (lengthBytes === 2) {
    header[1] = MASK_BIT | 126;
    header.writeUInt16BE(payload.length, 2);
  } else {
    header[1] = MASK_BIT | 127;
    header.writeBigUInt64BE(BigInt(payload.length), 2);
  }
  const body = Buffer.from(payload.map((b, i) => b ^ mask[i % 4]));
  return Buffer.concat([header, mask, body]);
}

/** A masked binary header claiming `payloadBytes` (64-bit length form), with no payload after it. */
function lengthClaim(payloadBytes: bigint): Buffer {
  const header = Buffer.alloc(2 + 8 + 4);
  header[0] = FIN | OP.binary;
  header[1] = MASK_BIT | 127;
  header.writeBigUInt64BE(payloadBytes, 2);
  return header;
}

interface Kind {
  name: string;
  bytes: () => Buffer;
  reason: FrameErrorReason;
  closeCode: number;
}

// Each violation and the close code RFC 6455 section 7.4.1 gives it.
const KINDS: Kind[] = [
  // Section 5.3: a client masks every frame; the three bytes of an unmasked one-byte binary frame.
  {
    name: 'unmasked frame',
    bytes: () => Buffer.from([FIN | OP.binary, 0x01, 0xc0]),
    reason: 'E_FRAME_MASK',
    closeCode: CLOSE_PROTOCOL_ERROR,
  },
  // 16 MiB, past every payload limit of the coordinator (the hello's size before the hello, twice
  // the plan's frame limit after; server/worker-session.ts).
  {
    name: 'length 16 MiB',
    bytes: () => lengthClaim(16n * 1024n * 1024n),
    reason: 'E_FRAME_TOO_BIG',
    closeCode: CLOSE_MESSAGE_TOO_BIG,
  },
  {
    name: 'length 2^62',
    bytes: () => lengthClaim(2n ** 62n),
    reason: 'E_FRAME_TOO_BIG',
    closeCode: CLOSE_MESSAGE_TOO_BIG,
  },
  // Section 5.2: opcodes 3-7 are reserved for further non-control frames.
  {
    name: 'opcode 3',
    bytes: () => maskedFrame(FIN | 0x3, Uint8Array.of(1)),
    reason: 'E_FRAME_OPCODE',
    closeCode: CLOSE_PROTOCOL_ERROR,
  },
  // Section 5.2: RSV1 must be 0 unless an extension says otherwise; none is negotiated.
  {
    name: 'RSV1 set',
    bytes: () => maskedFrame(FIN | RSV1 | OP.binary, Uint8Array.of(1)),
    reason: 'E_FRAME_RSV',
    closeCode: CLOSE_PROTOCOL_ERROR,
  },
  // Section 8.1: a text frame must be UTF-8; 0xff never occurs in UTF-8 (RFC 3629 section 1).
  {
    name: 'invalid UTF-8 text',
    bytes: () => maskedFrame(FIN | OP.text, Uint8Array.of(0xff, 0xfe)),
    reason: 'E_FRAME_UTF8',
    closeCode: CLOSE_INVALID_PAYLOAD,
  },
  // Section 5.5: a control frame's payload is 125 bytes at most.
  {
    name: 'oversized ping',
    bytes: () => maskedFrame(FIN | OP.ping, new Uint8Array(126)),
    reason: 'E_FRAME_CONTROL',
    closeCode: CLOSE_PROTOCOL_ERROR,
  },
  // Section 5.4: a continuation frame only continues a fragmented message.
  {
    name: 'stray continuation',
    bytes: () => maskedFrame(FIN | OP.continuation, Uint8Array.of(1)),
    reason: 'E_FRAME_OPCODE',
    closeCode: CLOSE_PROTOCOL_ERROR,
  },
  // Section 7.4.2: codes 0-999 are not used.
  {
    name: 'close code 999',
    bytes: () => maskedFrame(FIN | OP.close, Uint8Array.of(999 >> 8, 999 & 0xff)),
    reason: 'E_FRAME_CLOSE_CODE',
    closeCode: CLOSE_PROTOCOL_ERROR,
  },
];

/** A raw connection past the HTTP upgrade: the server's frames as they come, and its end. */
class RawPeer {
  private readonly socket: Socket;
  private received = Buffer.alloc(0);
  private upgraded = false;
  private readonly waiters: (() => void)[] = [];
  readonly ended: Promise<void>;

  private constructor(socket: Socket) {
    this.socket = socket;
    this.ended = new Promise((resolve) => socket.once('close', () => resolve()));
    socket.on('error', () => undefined);
    socket.on('data', (chunk: Buffer) => {
      this.received = Buffer.concat([this.received, chunk]);
      for (const w of this.waiters.splice(0)) w();
    });
  }

  /** Connects and upgrades (RFC 6455 section 4.1), checking the server's Sec-WebSocket-Accept. */
  static async open(port: number): Promise<RawPeer> {
    const socket = connect(port, '127.0.0.1');
    await new Promise<void>((resolve, reject) => {
      socket.once('connect', resolve);
      socket.once('error', reject);
    });
    const peer = new RawPeer(socket);
    const key = randomBytes(16).toString('base64');
    socket.write(
      `GET / HTTP/1.1\r\nHost: 127.0.0.1:${port}\r\nUpgrade: websocket\r\nConnection: Upgrade\r\nSec-WebSocket-Key: ${key}\r\nSec-WebSocket-Version: 13\r\n\r\n`,
    );
    await peer.until(() => peer.received.includes('\r\n\r\n'));
    const end = peer.received.indexOf('\r\n\r\n');
    const response = peer.received.subarray(0, end).toString('latin1');
    expect(response).toMatch(/^HTTP\/1\.1 101 /);
    const accept = createHash('sha1')
      .update(key + WEBSOCKET_GUID)
      .digest('base64');
    expect(response).toContain(`Sec-WebSocket-Accept: ${accept}`);
    peer.received = peer.received.subarray(end + 4);
    peer.upgraded = true;
    return peer;
  }

  private until(done: () => boolean): Promise<void> {
    return new Promise((resolve, reject) => {
      const timer = setTimeout(
        () => reject(new Error('the coordinator did not answer in time')),
        PROBE_TIMEOUT_MS,
      );
      const check = (): void => {
        if (done()) {
          clearTimeout(timer);
          resolve();
        } else this.waiters.push(check);
      };
      check();
    });
  }

  /** The server's frames so far (section 5.2; a server's frames are unmasked): opcode and payload. */
  frames(): { opcode: number; payload: Buffer }[] {
    const frames: { opcode: number; payload: Buffer }[] = [];
    let i = 0;
    while (this.upgraded && i + 2 <= this.received.length) {
      const lengthCode = this.received[i + 1] & 0x7f;
      const extended = lengthCode === 126 ? 2 : lengthCode === 127 ? 8 : 0;
      if (i + 2 + extended > this.received.length) break;
      const length =
        extended === 0
          ? lengthCode
          : extended === 2
            ? this.received.readUInt16BE(i + 2)
            : Number(this.received.readBigUInt64BE(i + 2));
      const start = i + 2 + extended;
      if (start + length > this.received.length) break;
      frames.push({
        opcode: this.received[i] & 0x0f,
        payload: this.received.subarray(start, start + length),
      });
      i = start + length;
    }
    return frames;
  }

  /** Waits for the challenge and answers it with a valid hello. */
  async hello(workerName: string): Promise<void> {
    await this.until(() => this.frames().some((f) => f.opcode === OP.binary));
    const challenge = decodeMessage(
      new Uint8Array(this.frames().find((f) => f.opcode === OP.binary)!.payload),
      READ_LIMIT_BYTES,
    ) as { type: string; nonce: Uint8Array };
    expect(challenge.type).toBe('challenge');
    const hello = encodeMessage({
      type: 'hello',
      protocolVersion: PROTOCOL_VERSION,
      workerName,
      capacity: 1,
      proof: proveKey(KEY, challenge.nonce),
    });
    this.socket.write(maskedFrame(FIN | OP.binary, hello));
  }

  send(bytes: Buffer): void {
    this.socket.write(bytes);
  }

  /** Waits until the server closes the connection; the code of its close frame (section 5.5.1). */
  async closeCode(): Promise<number | null> {
    const timer = setTimeout(() => this.socket.destroy(), PROBE_TIMEOUT_MS);
    await this.ended;
    clearTimeout(timer);
    const close = this.frames().find((f) => f.opcode === OP.close);
    return close === undefined || close.payload.length < 2 ? null : close.payload.readUInt16BE(0);
  }
}

const started: CliProcess[] = [];
afterEach(() => {
  for (const p of started.splice(0)) p.kill();
});

describe('malformed WebSocket frames', () => {
  it('close only the connection that sent them, with the RFC 6455 close code; the run finishes unchanged', async () => {
    const out = freshDir('frames');
    const keyFile = writeKeyFile(out, KEY);
    const coordinator = new CliProcess(
      quickstartCoordinatorArgs(
        out,
        keyFile,
        2,
        TWEAKS.flatMap((o) => ['--tweak', o]),
      ),
    );
    started.push(coordinator);
    const url = (await coordinator.waitForStderr(/listening on (ws:\/\/\S+)/, 30_000))[1];
    const port = Number(new URL(url).port);
    const expectedCounts: Partial<Record<FrameErrorReason, number>> = {};
    const closeCodes: Record<string, number | null> = {};

    const probe = async (phase: string, kind: Kind, afterHello: boolean): Promise<void> => {
      const peer = await RawPeer.open(port);
      if (afterHello) {
        const name = `prober-${Object.keys(closeCodes).length}`;
        await peer.hello(name);
        await coordinator.waitForStderr(new RegExp(`worker "${name}" joined`), PROBE_TIMEOUT_MS);
      }
      peer.send(kind.bytes());
      const code = await peer.closeCode();
      closeCodes[`${phase}: ${kind.name}`] = code;
      expect(code, `${phase}: ${kind.name}`).toBe(kind.closeCode);
      expect(coordinator.child.exitCode, coordinator.stderr).toBeNull();
      expectedCounts[kind.reason] = (expectedCounts[kind.reason] ?? 0) + 1;
    };

    // Before any worker: each kind before a hello, and a few after a valid one.
    for (const kind of KINDS) await probe('before hello', kind, false);
    for (const kind of [KINDS[0], KINDS[1], KINDS[5], KINDS[8]])
      await probe('after hello', kind, true);

    const workers = honestWorkers(url, keyFile, 2);
    started.push(...workers);
    await coordinator.waitForStderr(/worker "honest-2" hosts clients/, 30_000);
    // During the run: every kind again, on fresh connections.
    for (const kind of KINDS) await probe('during the run', kind, false);
    const runningAfterProbes = coordinator.child.exitCode === null;

    const exit = await coordinator.exit(40_000);
    expect(exit.code, coordinator.stderr).toBe(0);
    for (const worker of workers) expect((await worker.exit(20_000)).code).toBe(0);
    expect(runningAfterProbes).toBe(true);

    const summary = JSON.parse(readFileSync(join(out, 'outcome.json'), 'utf8')) as {
      distributed: { frameErrors: Record<string, number> };
    };
    console.log('close codes by probe:', closeCodes);
    console.log('frame errors counted by the coordinator:', summary.distributed.frameErrors);
    expect(summary.distributed.frameErrors).toEqual(expectedCounts);

    const clean = runInProcess(
      loadScenarioFile(join(repoRoot, 'scenarios/quickstart.yaml'), TWEAKS),
    );
    const expected = Buffer.alloc(clean.finalModel.length * 8);
    clean.finalModel.forEach((v, j) => expected.writeDoubleLE(v, j * 8));
    expect(readFileSync(join(out, 'model.f64')).equals(expected)).toBe(true);
  }, 60_000);
});
