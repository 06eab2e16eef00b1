// A worker whose connection drops mid-run reconnects with backoff and resumes its session (the
// welcome's resume token); its clients are dropped only around the cut and take part again
// after, and the run reaches its target with no worker lost. A worker that does not come back
// within the coordinator's grace (--resume-grace-seconds) is marked lost and the run goes on;
// its late resume, like one with a token the coordinator never dealt, is refused with E_AUTH.
// Real processes on 127.0.0.1: a coordinator, two workers joined directly, and one joined
// through a TCP relay in this test that can cut both of its sockets at once.

import { readFileSync } from 'node:fs';
import { join } from 'node:path';
import { randomBytes } from 'node:crypto';
import WebSocket from 'ws';
import { afterEach, describe, expect, it } from 'vitest';
import {
  decodeMessage,
  encodeMessage,
  PROTOCOL_VERSION,
  proveKey,
  RESUME_TOKEN_BYTES,
} from '../../src/protocol/index.js';
import type { RoundRecord } from '../../src/engine/round-record.js';
import { CliProcess, freshDir, readJsonLines, repoRoot, writeKeyFile } from './cli-process.js';
import { Relay } from './tcp-relay.js';

const KEY = 'a-key-for-the-resume-test';
const READ_LIMIT_BYTES = 64 * 1024 * 1024;

/** Answers the challenge with a correct proof and `resume`; resolves to the error code sent back. */
function helloWithResume(url: string, resume: Uint8Array): Promise<string> {
  return new Promise((resolve, reject) => {
    const ws = new WebSocket(url, { perMessageDeflate: false });
    ws.on('message', (data: Buffer) => {
      const message = decodeMessage(new Uint8Array(data), READ_LIMIT_BYTES) as Record<
        string,
        unknown
      >;
      if (message.type === 'challenge') {
        ws.send(
          encodeMessage({
            type: 'hello',
            protocolVersion: PROTOCOL_VERSION,
            workerName: 'stranger',
            capacity: 1,
            proof: proveKey(KEY, message.nonce as Uint8Array),
            resume,
          }),
          { binary: true },
        );
      } else {
        ws.close();
        resolve(
          message.type === 'error'
            ? (message.code as string)
            : `unexpected ${String(message.type)}`,
        );
      }
    });
    ws.once('error', reject);
  });
}

const started: CliProcess[] = [];
const relays: Relay[] = [];
afterEach(async () => {
  for (const p of started.splice(0)) p.kill();
  for (const r of relays.splice(0)) await r.close();
});

function start(args: string[]): CliProcess {
  const cli = new CliProcess(args);
  started.push(cli);
  return cli;
}

interface Run {
  url: string;
  out: string;
  coordinator: CliProcess;
  direct: CliProcess[];
  relayed: CliProcess;
  relay: Relay;
  relayedClientIds: number[];
}

/** Coordinator, two direct workers and one relayed worker (capacity 3 each for quickstart's 8 clients). */
async function startRun(prefix: string, extra: string[]): Promise<Run> {
  const out = freshDir(prefix);
  const keyFile = writeKeyFile(out, KEY);
  // Wall clock, 10 ms steps: quickstart's FedLin rounds last a few tenths of a second, long
  // enough to cut in, and the run a few seconds.
  const coordinator = start([
    'coordinator',
    join(repoRoot, 'scenarios/quickstart.yaml'),
    '--listen',
    '127.0.0.1:0',
    '--key-file',
    keyFile,
    '--workers-min',
    '3',
    '--out',
    out,
    '--tweak',
    'timing.clock:wall',
    '--tweak',
    'timing.stepCostSeconds:0.01',
    ...extra,
  ]);
  const url = (await coordinator.waitForStderr(/listening on (ws:\/\/\S+)/, 20_000))[1];
  const relay = new Relay(Number(new URL(url).port));
  relays.push(relay);
  const relayUrl = await relay.listen();
  const workerArgs = (name: string, joinUrl: string) => [
    'worker',
    joinUrl,
    '--key-file',
    keyFile,
    '--capacity',
    '3',
    '--name',
    name,
  ];
  const direct = [start(workerArgs('direct-a', url)), start(workerArgs('direct-b', url))];
  const relayed = start(workerArgs('relayed', relayUrl));
  const hosts = await coordinator.waitForStderr(/worker "relayed" hosts clients ([\d, ]+)/, 30_000);
  return {
    url,
    out,
    coordinator,
    direct,
    relayed,
    relay,
    relayedClientIds: hosts[1].split(', ').map(Number),
  };
}

interface Summary {
  stopReason: string;
  protocolErrors: Record<string, number>;
  distributed: {
    lostWorkers: { workerName: string; clientIds: number[]; round: number; reason: string }[];
  };
}

function readSummary(out: string): Summary {
  return JSON.parse(readFileSync(join(out, 'outcome.json'), 'utf8')) as Summary;
}

function takesPart(record: RoundRecord, clientId: number): boolean {
  return Object.hasOwn(record.localSteps, String(clientId)) && !record.dropped.includes(clientId);
}

describe('a worker whose connection drops mid-run', () => {
  it('reconnects, resumes its clients and the run reaches its target with no worker lost', async () => {
    // Top-k on both links keeps replicas at both ends (downlink fields, FedLin's uplink gradient),
    // which a resume must start afresh on both ends; quickstart reaches its target so in under
    // 100 of its 150 rounds without a cut (measured with `roundwire run`).
    const run = await startRun('resume', [
      '--resume-grace-seconds',
      '10',
      '--tweak',
      'compression.uplink.default:{kind: top-k, fraction: 0.5, errorFeedback: true}',
      '--tweak',
      'compression.downlink.default:{kind: top-k, fraction: 0.5, errorFeedback: true}',
    ]);
    await run.coordinator.waitForStderr(/round (?:[4-9]|[1-9]\d+)\//, 30_000);
    run.relay.cut();
    const disconnected = Number(
      (
        await run.coordinator.waitForStderr(/worker "relayed" disconnected in round (\d+)/, 10_000)
      )[1],
    );
    const resumed = Number(
      (await run.coordinator.waitForStderr(/worker "relayed" resumed in round (\d+)/, 20_000))[1],
    );

    const exit = await run.coordinator.exit(60_000);
    expect(exit.code, run.coordinator.stderr).toBe(0);
    const relayedExit = await run.relayed.exit(15_000);
    expect(relayedExit.code, run.relayed.stderr).toBe(0);
    expect(run.relayed.stderr).toMatch(/reconnecting to resume/);
    expect(run.relayed.stderr).toMatch(/resumed hosting clients/);
    expect(run.relay.connections).toBe(2);
    for (const worker of run.direct)
      expect((await worker.exit(15_000)).code, worker.stderr).toBe(0);

    const summary = readSummary(run.out);
    expect(summary.distributed.lostWorkers).toEqual([]);
    // No up answered a down of the old connection (the worker withholds those after resuming).
    expect(summary.protocolErrors).toEqual({});
    expect(summary.stopReason).toBe('target-reached');
    const rounds = readJsonLines<RoundRecord>(join(run.out, 'rounds.jsonl'));
    expect(rounds.map((r) => r.round)).toEqual(Array.from({ length: rounds.length }, (_, i) => i));

    const ids = run.relayedClientIds;
    const droppedRounds = rounds
      .filter((r) => ids.some((id) => r.dropped.includes(id)))
      .map((r) => r.round);
    // Dropped in the round of the cut at least, and only from the disconnect to the resume.
    expect(droppedRounds.length).toBeGreaterThan(0);
    for (const round of droppedRounds) {
      expect(round).toBeGreaterThanOrEqual(disconnected);
      expect(round).toBeLessThanOrEqual(resumed);
    }
    // Every round before the disconnect and after the resume has every relayed client taking part.
    const afterResume = rounds.filter((r) => r.round > resumed);
    expect(afterResume.length).toBeGreaterThan(0);
    for (const r of rounds.filter(
      (x) => (x.round >= 1 && x.round < disconnected) || x.round > resumed,
    )) {
      for (const id of ids) expect(takesPart(r, id), `client ${id} in round ${r.round}`).toBe(true);
    }
  }, 90_000);

  it('is marked lost when it does not come back within the grace, and the run completes', async () => {
    const run = await startRun('resume-lost', [
      '--resume-grace-seconds',
      '1',
      '--tweak',
      'run.rounds:120',
      '--tweak',
      'run.target:0',
    ]);
    await run.coordinator.waitForStderr(/round (?:[4-9]|[1-9]\d+)\//, 30_000);
    run.relay.refusing = true;
    run.relay.cut();
    const lostLine = await run.coordinator.waitForStderr(
      /worker "relayed" lost in round (\d+) \(connection closed, no resume within 1 s\)/,
      20_000,
    );
    // A token the coordinator never dealt, and one of the wrong length.
    expect(await helloWithResume(run.url, new Uint8Array(randomBytes(RESUME_TOKEN_BYTES)))).toBe(
      'E_AUTH',
    );
    expect(await helloWithResume(run.url, new Uint8Array(5))).toBe('E_TYPE');
    // Its token expired with the grace: when it gets through again, its resume is refused, it
    // joins afresh (as after a coordinator's restart), and a run with no clients left to deal
    // refuses that too.
    run.relay.refusing = false;
    const relayedExit = await run.relayed.exit(30_000);
    expect(relayedExit.code, run.relayed.stderr).not.toBe(0);
    expect(run.relayed.stderr).toMatch(/reconnecting to resume/);
    expect(run.relayed.stderr).toMatch(/refused to resume this session \(E_AUTH/);
    expect(run.relayed.stderr).toMatch(/refused by the coordinator \(E_CLIENT\)/);
    const exit = await run.coordinator.exit(60_000);
    expect(exit.code, run.coordinator.stderr).toBe(0);

    const summary = readSummary(run.out);
    expect(summary.stopReason).toBe('rounds-complete');
    expect(summary.distributed.lostWorkers).toHaveLength(1);
    const lost = summary.distributed.lostWorkers[0];
    expect(lost.workerName).toBe('relayed');
    expect(lost.clientIds).toEqual(run.relayedClientIds);
    expect(lost.round).toBe(Number(lostLine[1]));
    const rounds = readJsonLines<RoundRecord>(join(run.out, 'rounds.jsonl'));
    expect(rounds.map((r) => r.round)).toEqual(Array.from({ length: 121 }, (_, i) => i));
    // After the loss, the lost clients take part in no round, not even as dropped.
    for (const r of rounds.filter((x) => x.round > lost.round)) {
      for (const id of lost.clientIds) expect(Object.hasOwn(r.localSteps, String(id))).toBe(false);
    }
  }, 90_000);
});
