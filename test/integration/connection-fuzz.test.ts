// Nothing a peer sends ends the coordinator or changes a run (DESIGN.md, Messages; RFC 6455).
// A seeded generator sends more than 10,000 malformed frames at a real coordinator process while
// it waits for workers and while two honest worker processes run the rounds on the virtual clock:
// at the WebSocket framing level over raw TCP (each kind of violation of RFC 6455 section 5, with
// seeded parameters, and 4 MiB frames of empty maps before a hello) and at the MessagePack level
// over a ws client, before a hello and after a valid one (extra workers proving the run's key,
// which join before the run: once the clients are dealt, such a worker is refused at once).
// The coordinator never exits, counts each framing violation once, drops each authenticated
// peer once its bad messages pass the limit, and writes the records a clean run writes.

import { readFileSync } from 'node:fs';
import { join } from 'node:path';
import WebSocket from 'ws';
import { afterEach, describe, expect, it } from 'vitest';
import { Rng } from '../../src/base/rng.js';
import {
  CONNECTION_LIMITS,
  encodeMessage,
  encodeRoundFrame,
  helloFrameBytesMax,
} from '../../src/protocol/index.js';
import {
  CliProcess,
  freshDir,
  quickstartCoordinatorArgs,
  writeKeyFile,
  honestWorkers,
} from './cli-process.js';
import {
  authenticate,
  closeCodeIn,
  expectRecordsOfCleanRun,
  FIN,
  frame,
  lengthClaim,
  OP,
  rawConnection,
  RSV1,
  upgradeRequest,
} from './hostile-connections.js';

const KEY = 'a-key-for-the-connection-fuzz-test';
const SEED = 20_240_610;
const TWEAKS = ['run.rounds:400', 'run.target:0'];
/** Connections in flight at once: well under the cap on unauthenticated ones. */
const CONCURRENCY = 8;
const HOLD_MS = 5_000;
/** Extra workers that join before the run and send bad messages until they are dropped. */
const AUTHENTICATED_PEERS = 55;
/** 4 MiB, the size of the hello-phase frame of empty maps (issue 10, finding 4). */
const EMPTY_MAPS_BYTES = 4 * 1024 * 1024;

const started: CliProcess[] = [];
afterEach(() => {
  for (const p of started.splice(0)) p.kill();
});

const bytesOf = (rng: Rng, n: number): Uint8Array =>
  Uint8Array.from({ length: n }, () => rng.nextInt(256));

/** A MessagePack array32 (spec, "formats": 0xdd and a 32-bit count) of `count` empty fixmaps (0x80). */
function emptyMaps(count: number): Uint8Array {
  const out = new Uint8Array(5 + count).fill(0x80);
  out[0] = 0xdd;
  new DataView(out.buffer).setUint32(1, count);
  return out;
}

/** One frame that breaks RFC 6455 framing: its name and bytes. The kinds of issue 10, finding 1, with seeded parameters. */
function malformedFrame(
  rng: Rng,
  payloadLimitBytes: number | null,
): { kind: string; bytes: Buffer } {
  switch (rng.nextInt(payloadLimitBytes === null ? 9 : 10)) {
    case 0: // section 5.3: a client masks every frame
      return {
        kind: 'unmasked',
        bytes: frame(FIN | OP.binary, bytesOf(rng, 1 + rng.nextInt(40)), false),
      };
    case 1:
      return {
        kind: 'length 16 MiB',
        bytes: lengthClaim(16n * 1024n * 1024n + BigInt(rng.nextInt(1000))),
      };
    case 2:
      return { kind: 'length 2^62', bytes: lengthClaim(2n ** 62n + BigInt(rng.nextInt(1000))) };
    case 3: // section 5.2: opcodes 3-7 and 0xB-0xF are reserved
      return {
        kind: 'reserved opcode',
        bytes: frame(
          FIN | [3, 4, 5, 6, 7, 0xb, 0xc, 0xd, 0xe, 0xf][rng.nextInt(10)],
          bytesOf(rng, 1 + rng.nextInt(20)),
        ),
      };
    case 4: // section 5.2: no extension is negotiated, so RSV1-3 must be 0
      return {
        kind: 'RSV bits',
        bytes: frame(FIN | (RSV1 >> rng.nextInt(3)) | OP.binary, bytesOf(rng, 1 + rng.nextInt(20))),
      };
    case 5: // section 8.1; RFC 3629 section 1: 0xf8-0xff never occur in UTF-8
      return {
        kind: 'invalid UTF-8 text',
        bytes: frame(FIN | OP.text, Uint8Array.of(0x61, 0xf8 + rng.nextInt(8), 0x62)),
      };
    case 6: // section 5.5: a control frame carries at most 125 bytes
      return {
        kind: 'oversized ping',
        bytes: frame(FIN | OP.ping, bytesOf(rng, 126 + rng.nextInt(500))),
      };
    case 7: // section 5.4: a continuation only continues a fragmented message
      return {
        kind: 'stray continuation',
        bytes: frame(FIN | OP.continuation, bytesOf(rng, 1 + rng.nextInt(20))),
      };
    case 8: {
      // section 7.4.2: codes 0-999 are never used
      const code = rng.nextInt(1000);
      return {
        kind: 'close code below 1000',
        bytes: frame(FIN | OP.close, Uint8Array.of(code >> 8, code & 0xff)),
      };
    }
    default: // past the payload limit of the connection, sent in full
      return {
        kind: 'frame above the payload limit',
        bytes: frame(FIN | OP.binary, bytesOf(rng, payloadLimitBytes! + 1 + rng.nextInt(4096))),
      };
  }
}

/** One message of good framing and bad content (codec, shape or order), as its bytes. */
function malformedMessage(rng: Rng): Uint8Array {
  switch (rng.nextInt(12)) {
    case 0:
      return bytesOf(rng, 1 + rng.nextInt(64));
    case 1: // 0xc1 is the one byte MessagePack never uses (spec, "formats")
      return Uint8Array.of(0xc1, ...bytesOf(rng, rng.nextInt(8)));
    case 2: {
      const whole = encodeMessage({ type: 'heartbeat', sentAtMs: rng.nextInt(1e9) });
      return whole.slice(0, 1 + rng.nextInt(whole.byteLength - 1));
    }
    case 3:
      return encodeMessage([1, 2, rng.nextInt(100)] as never);
    case 4:
      return encodeMessage({ type: `no-such-type-${rng.nextInt(100)}` } as never);
    case 5: // ups with nothing to answer (the quickstart's FedLin: exchanges 'gradient', 'local')
      return encodeRoundFrame(
        {
          type: 'ups',
          round: rng.nextInt(10),
          exchange: 'local',
          entries: [
            {
              clientId: 0,
              fields: {},
              updateNotFinite: true,
              localSteps: 1,
              computeSeconds: 0,
              waitSeconds: 0,
              transferSeconds: 0,
            },
          ],
        },
        { gradient: {}, local: {} },
      );
    case 6:
      return encodeMessage({ type: 'heartbeat', sentAtMs: -1 - rng.nextInt(100) });
    case 7:
      return encodeMessage({ type: 'error', code: 'E_NOTHING', message: 'x' } as never);
    case 8: {
      // nested past the codec's depth limit
      let value: unknown = 0;
      for (let i = 0; i < 40 + rng.nextInt(40); i++) value = [value];
      return encodeMessage(value as never);
    }
    case 9: // small enough to decode: a few thousand empty maps
      return emptyMaps(100 + rng.nextInt(2000));
    case 10: // large, and answering no down: refused by its size, never decoded
      return emptyMaps(65_536 + rng.nextInt(60_000));
    default: {
      const whole = encodeMessage({ type: 'heartbeat', sentAtMs: 1 });
      return Uint8Array.from([...whole, ...bytesOf(rng, 1 + rng.nextInt(8))]);
    }
  }
}

/** Runs `task` `count` times, `CONCURRENCY` at once. */
async function pool(count: number, task: (i: number) => Promise<void>): Promise<void> {
  let next = 0;
  await Promise.all(
    Array.from({ length: CONCURRENCY }, async () => {
      while (next < count) await task(next++);
    }),
  );
}

interface Tally {
  framingFrames: number;
  framingConnections: number;
  closeCodes: Map<number | null, number>;
  messagesBeforeHello: number;
  messagesAfterHello: number;
  authenticatedPeers: number;
  emptyMapFrames: number;
  /** first messages past the hello's size: refused by their header, as a framing fault */
  oversizeFirstMessages: number;
}

describe('a seeded fuzz of frames and messages', () => {
  it('never ends the coordinator, closes each bad connection, and leaves the records as a clean run writes them', async () => {
    const rng = Rng.fromSeed(SEED);
    const out = freshDir('fuzz');
    const keyFile = writeKeyFile(out, KEY);
    const coordinator = new CliProcess(
      quickstartCoordinatorArgs(
        out,
        keyFile,
        2,
        TWEAKS.flatMap((t) => ['--tweak', t]),
      ),
    );
    started.push(coordinator);
    const url = (await coordinator.waitForStderr(/listening on (ws:\/\/\S+)/, 30_000))[1];
    const port = Number(new URL(url).port);
    const tally: Tally = {
      framingFrames: 0,
      framingConnections: 0,
      closeCodes: new Map(),
      messagesBeforeHello: 0,
      messagesAfterHello: 0,
      authenticatedPeers: 0,
      emptyMapFrames: 0,
      oversizeFirstMessages: 0,
    };
    const alive = (): void => expect(coordinator.child.exitCode, coordinator.stderr).toBeNull();

    /** A raw connection: upgrade, one frame that breaks the framing, and the server's close. */
    const framing = async (bytes: Buffer, tallyCloseCode = true): Promise<void> => {
      const { request } = upgradeRequest(port);
      const result = await rawConnection(
        port,
        Buffer.concat([Buffer.from(request), bytes]),
        HOLD_MS,
      );
      tally.framingFrames++;
      tally.framingConnections++;
      if (!tallyCloseCode) return;
      const code = closeCodeIn(result.received);
      tally.closeCodes.set(code, (tally.closeCodes.get(code) ?? 0) + 1);
    };
    /** A ws client whose first message is a bad one: refused and closed. */
    const beforeHello = (bytes: Uint8Array): Promise<void> =>
      new Promise((resolve) => {
        const ws = new WebSocket(url, { perMessageDeflate: false });
        ws.on('error', () => undefined);
        ws.once('message', () => {
          ws.send(bytes, { binary: true });
          tally.messagesBeforeHello++;
          if (bytes.byteLength > helloFrameBytesMax()) tally.oversizeFirstMessages++;
        });
        const timer = setTimeout(() => ws.terminate(), HOLD_MS);
        ws.once('close', () => {
          clearTimeout(timer);
          resolve();
        });
      });
    /** An extra worker with the run's key that, once in, sends bad messages until it is dropped. */
    const afterHello = async (i: number, messagesMax: number): Promise<number> => {
      const name = `fuzzer-${i}`;
      const peer = await authenticate(url, KEY, name, 1);
      // Messages right behind the hello would reach the handshake, which reads only the hello.
      await coordinator.waitForStderr(new RegExp(`worker "${name}" joined`), 10_000);
      tally.authenticatedPeers++;
      let sent = 0;
      while (sent < messagesMax && peer.ws.readyState === WebSocket.OPEN) {
        peer.ws.send(malformedMessage(rng), { binary: true });
        sent++;
        tally.messagesAfterHello++;
      }
      const timer = setTimeout(() => peer.ws.terminate(), HOLD_MS);
      const code = await peer.closed;
      clearTimeout(timer);
      return code;
    };

    // Before any honest worker: the hello-phase frames of empty maps, framing faults, bad first
    // messages, and authenticated peers that send bad messages until they are dropped.
    for (let i = 0; i < 3; i++) {
      // The coordinator ends the connection while the 4 MiB are still being written, and the
      // reset that follows may discard its close frame here before it is read.
      await framing(frame(FIN | OP.binary, emptyMaps(EMPTY_MAPS_BYTES - 5)), false);
      tally.emptyMapFrames++;
    }
    await pool(1600, () => framing(malformedFrame(rng, 1024).bytes));
    alive();
    await pool(500, () => beforeHello(malformedMessage(rng)));
    alive();
    const dropCodes: number[] = [];
    // A peer is dropped past badMessagesBurst bad messages; each sends a few more than that.
    const perPeer = CONNECTION_LIMITS.badMessagesBurst + 20;
    for (let i = 0; i < AUTHENTICATED_PEERS; i++) dropCodes.push(await afterHello(i, perPeer));
    alive();
    // Authenticated, then a framing fault.
    for (let i = 0; i < 30; i++) {
      const peer = await authenticate(url, KEY, `framer-${i}`, 1);
      await coordinator.waitForStderr(new RegExp(`worker "framer-${i}" joined`), 10_000);
      // ws's client writes only valid frames: the bad one goes straight to its socket.
      (peer.ws as unknown as { _socket: { write: (b: Buffer) => void } })._socket.write(
        malformedFrame(rng, null).bytes,
      );
      tally.framingFrames++;
      const timer = setTimeout(() => peer.ws.terminate(), HOLD_MS);
      await peer.closed;
      clearTimeout(timer);
    }
    alive();

    // The run: two honest workers, and framing faults and bad first messages while the rounds
    // go on (an extra worker joining now is refused at once: the clients are dealt).
    const workers = honestWorkers(url, keyFile, 2);
    started.push(...workers);
    await coordinator.waitForStderr(/worker "honest-2" hosts clients/, 30_000);
    const duringRun = { frames: 0 };
    const stillRunning = (): boolean => coordinator.child.exitCode === null;
    await pool(1300, async () => {
      if (!stillRunning()) return;
      await framing(malformedFrame(rng, 1024).bytes);
      duringRun.frames++;
    });
    await pool(600, async () => {
      if (!stillRunning()) return;
      await beforeHello(malformedMessage(rng));
      duringRun.frames++;
    });

    const exit = await coordinator.exit(60_000);
    expect(exit.code, coordinator.stderr).toBe(0);
    for (const worker of workers) expect((await worker.exit(20_000)).code, worker.stderr).toBe(0);

    const total = tally.framingFrames + tally.messagesBeforeHello + tally.messagesAfterHello;
    console.log(
      `seed ${SEED}: ${total} malformed frames: ${tally.framingFrames} breaking the framing (${tally.framingConnections} raw connections, ${tally.emptyMapFrames} of them 4 MiB of empty maps before a hello), ${tally.messagesBeforeHello} bad first messages, ${tally.messagesAfterHello} bad messages from ${tally.authenticatedPeers} authenticated peers; ${duringRun.frames} connections during the rounds`,
    );
    console.log('close codes of the raw connections:', Object.fromEntries(tally.closeCodes));
    expect(total).toBeGreaterThanOrEqual(10_000);
    expect(duringRun.frames).toBeGreaterThan(100);
    // Every raw connection got a close frame with an RFC 6455 section 7.4.1 code: 1002, 1007 or 1009.
    expect([...tally.closeCodes.keys()].sort()).toEqual([1002, 1007, 1009]);
    // Every authenticated peer before the run was dropped for its bad messages (1008).
    // (1006 on this end when the reset of a socket still being written to overtook the close
    // frame; the coordinator's count below says why each was dropped.)
    expect(dropCodes.every((code) => code === 1008 || code === 1006)).toBe(true);
    expect(dropCodes).toContain(1008);

    const summary = JSON.parse(readFileSync(join(out, 'outcome.json'), 'utf8')) as {
      distributed: { frameErrors: Record<string, number>; limitClosings: Record<string, number> };
    };
    console.log('counted by the coordinator:', summary.distributed);
    const frameErrors = Object.values(summary.distributed.frameErrors).reduce((a, b) => a + b, 0);
    expect(frameErrors).toBe(tally.framingFrames + tally.oversizeFirstMessages);
    const { limitClosings } = summary.distributed;
    expect(
      (limitClosings.E_LIMIT_BAD_MESSAGES ?? 0) + (limitClosings.E_LIMIT_MESSAGE_RATE ?? 0),
    ).toBe(AUTHENTICATED_PEERS);
    expect(summary.distributed.limitClosings.E_LIMIT_HANDSHAKE_DEADLINE ?? 0).toBe(0);

    expectRecordsOfCleanRun(out);
  }, 180_000);
});
