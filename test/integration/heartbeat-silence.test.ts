// Heartbeat silence (DESIGN.md, Messages: heartbeat): a worker that completes the handshake, says
// ready, answers heartbeats until the rounds start, and from its first downs on stays connected
// but sends nothing (no heartbeat, no up) is marked lost once it has been
// silent past the coordinator's limit (--heartbeat-silence-seconds); its clients leave the
// round and the rest of the run, and the run goes on with the real worker processes beside it
// and records every round. The real workers join first and wait longer than the limit for the
// silent one: waiting to be dealt clients is not silence (a worker starts its heartbeats with
// the welcome), so they must not be lost for it.

import { readFileSync } from 'node:fs';
import { join } from 'node:path';
import WebSocket from 'ws';
import { afterEach, describe, expect, it } from 'vitest';
import {
  decodeMessage,
  encodeMessage,
  FrameElements,
  PROTOCOL_VERSION,
  ROUND_FRAME_KINDS,
  proveKey,
} from '../../src/protocol/index.js';
import type { RoundRecord } from '../../src/engine/round-record.js';
import { runCli } from '../cli/run-cli.js';
import {
  CliProcess,
  freshDir,
  readJsonLines,
  writeKeyFile,
  quickstartCoordinatorArgs,
} from './cli-process.js';

const KEY = 'a-key-for-the-heartbeat-test';
const SILENCE_SECONDS = 1.5;
const ROUNDS = 6;
const READ_LIMIT_BYTES = 64 * 1024 * 1024;

type Plain = Record<string, unknown>;

interface SilentPeer {
  /** message types received, in order */
  received: string[];
  assignments: number[];
  /** when it sent its last message (its last heartbeat before the first downs) */
  lastSentMs: number;
  closed: Promise<number>;
}

/**
 * A peer that answers the challenge with a correct hello (HMAC proof), says ready and echoes
 * heartbeats while the other workers build their data, then, from its first downs, never sends
 * again.
 */
function joinSilently(url: string): Promise<SilentPeer> {
  return new Promise((resolve, reject) => {
    const ws = new WebSocket(url, { perMessageDeflate: false });
    const peer: SilentPeer = {
      received: [],
      assignments: [],
      lastSentMs: 0,
      closed: new Promise((r) => ws.once('close', () => r(performance.now()))),
    };
    const send = (message: Parameters<typeof encodeMessage>[0]): void => {
      ws.send(encodeMessage(message), { binary: true });
      peer.lastSentMs = performance.now();
    };
    ws.on('message', (data: Buffer) => {
      const decoded = decodeMessage(new Uint8Array(data), READ_LIMIT_BYTES);
      // A round frame is an array whose first element is its kind (round-frame-layout.ts).
      if (decoded instanceof FrameElements) {
        peer.received.push(decoded.elements[0] === ROUND_FRAME_KINDS.downs ? 'downs' : 'frame');
        return;
      }
      const message = decoded as Plain;
      peer.received.push(message.type as string);
      if (message.type === 'challenge') {
        ws.send(
          encodeMessage({
            type: 'hello',
            protocolVersion: PROTOCOL_VERSION,
            workerName: 'silent',
            capacity: 2,
            proof: proveKey(KEY, message.nonce as Uint8Array),
          }),
          { binary: true },
        );
      } else if (message.type === 'welcome') {
        peer.assignments = message.assignments as number[];
        send({ type: 'ready' });
        resolve(peer);
      } else if (message.type === 'heartbeat' && !peer.received.includes('downs')) {
        send({ type: 'heartbeat', sentAtMs: Date.now() });
      }
    });
    ws.once('error', reject);
  });
}

const started: CliProcess[] = [];
afterEach(() => {
  for (const p of started.splice(0)) p.kill();
});

describe('a worker that falls silent', () => {
  it('is lost after the silence limit and the run completes without it', async () => {
    const out = freshDir('silence');
    const keyFile = writeKeyFile(out, KEY);
    const coordinator = new CliProcess(
      quickstartCoordinatorArgs(out, keyFile, 3, [
        '--heartbeat-silence-seconds',
        String(SILENCE_SECONDS),
        '--tweak',
        `run.rounds:${ROUNDS}`,
        '--tweak',
        'run.target:0',
      ]),
    );
    started.push(coordinator);
    const url = (await coordinator.waitForStderr(/listening on (ws:\/\/\S+)/, 30_000))[1];
    const steady = ['steady-1', 'steady-2'].map(
      (name) =>
        new CliProcess(['worker', url, '--key-file', keyFile, '--capacity', '3', '--name', name]),
    );
    started.push(...steady);
    await coordinator.waitForStderr(/worker "steady-1" joined/, 30_000);
    await coordinator.waitForStderr(/worker "steady-2" joined/, 30_000);
    // Longer than the limit: the steady workers have said nothing since their hello.
    await new Promise((r) => setTimeout(r, (SILENCE_SECONDS + 1) * 1000));

    const silent = await joinSilently(url);
    expect(silent.assignments.length).toBeGreaterThan(0);
    const closedMs = await Promise.race([
      silent.closed,
      new Promise<number>((_, reject) =>
        setTimeout(
          () =>
            reject(new Error(`the silent peer was not dropped; stderr:\n${coordinator.stderr}`)),
          15_000,
        ),
      ),
    ]);
    const silentForSeconds = (closedMs - silent.lastSentMs) / 1000;
    // Not before the limit; and within it plus one heartbeat interval (a sixth of it, see
    // heartbeatForSilence) plus scheduling slack on a shared machine.
    expect(silentForSeconds).toBeGreaterThanOrEqual(SILENCE_SECONDS);
    expect(silentForSeconds).toBeLessThan(SILENCE_SECONDS * (1 + 1 / 6) + 2);
    // The coordinator kept beating while it waited: heartbeats and downs reached the silent peer.
    expect(silent.received).toContain('heartbeat');
    expect(silent.received).toContain('downs');

    const exit = await coordinator.exit(40_000);
    expect(exit.code, coordinator.stderr).toBe(0);
    for (const w of steady) expect((await w.exit(10_000)).code, w.stderr).toBe(0);

    const rounds = readJsonLines<RoundRecord>(join(out, 'rounds.jsonl'));
    expect(rounds.map((r) => r.round)).toEqual(Array.from({ length: ROUNDS + 1 }, (_, i) => i));
    const summary = JSON.parse(readFileSync(join(out, 'outcome.json'), 'utf8')) as {
      stopReason: string;
      lostWorkers: string[];
      distributed: {
        lostWorkers: { workerName: string; clientIds: number[]; round: number; reason: string }[];
      };
    };
    expect(summary.stopReason).toBe('rounds-complete');
    expect(summary.lostWorkers).toEqual(['silent']);
    expect(summary.distributed.lostWorkers).toHaveLength(1);
    const lost = summary.distributed.lostWorkers[0];
    expect(lost.workerName).toBe('silent');
    expect(lost.clientIds).toEqual(silent.assignments);
    // Round 1 waits for the silent peer's ups until it is lost.
    expect(lost.round).toBe(1);
    expect(lost.reason).toMatch(/silent for more than 1\.5 s/);
    // From the next round on, only the steady workers' clients take part, and all of them.
    const steadyIds = Array.from({ length: 8 }, (_, i) => i).filter(
      (id) => !silent.assignments.includes(id),
    );
    for (const r of rounds.filter((x) => x.round > lost.round)) {
      expect(
        Object.keys(r.localSteps)
          .map(Number)
          .sort((a, b) => a - b),
      ).toEqual(steadyIds);
      expect(r.dropped).toEqual([]);
    }
  }, 60_000);
});

describe('roundwire coordinator --heartbeat-silence-seconds', () => {
  it('exits 2 with the accepted range on a value below a second', async () => {
    const result = await runCli(
      [
        'coordinator',
        'scenarios/quickstart.yaml',
        '--listen',
        '127.0.0.1:0',
        '--heartbeat-silence-seconds',
        '0.2',
      ],
      30_000,
    );
    expect(result.code).toBe(2);
    expect(result.stderr).toMatch(
      /--heartbeat-silence-seconds: expected seconds from 1 to 3600, got "0\.2"/,
    );
  });
});
