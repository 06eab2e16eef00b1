// Idle and slow connections cannot keep workers out (issue 10, finding 2). This test holds 200
// of them open against a real coordinator process, re-opening each one the coordinator drops
// after a pause: silent TCP connections, connections upgraded that never send a hello, and
// connections refused for a bad first message that never answer the close frame. Meanwhile
// honest workers join and the run's records are a clean run's (virtual clock), and, in a second
// run (wall clock), a worker whose link is cut resumes its clients; there, an up sent before a
// hello is refused with E_ORDER (a resuming worker sends its hello first).

import { readFileSync } from 'node:fs';
import { connect, type Socket } from 'node:net';
import { join } from 'node:path';
import WebSocket from 'ws';
import { afterEach, describe, expect, it } from 'vitest';
import { decodeMessage, encodeRoundFrame } from '../../src/protocol/index.js';
import { CliProcess, freshDir, quickstartCoordinatorArgs, writeKeyFile } from './cli-process.js';
import { expectRecordsOfCleanRun, FIN, frame, OP, upgradeRequest } from './hostile-connections.js';
import { Relay } from './tcp-relay.js';

const KEY = 'a-key-for-the-idle-connections-test';
const HELD = 200;
/** How long a dropped idle connection waits before it is opened again. */
const REOPEN_MS = 500;

type IdleKind = 'silent TCP' | 'upgraded, no hello' | 'refused, ignoring the close';
const KINDS: IdleKind[] = ['silent TCP', 'upgraded, no hello', 'refused, ignoring the close'];

/** Keeps `HELD` idle connections open, each re-opened after REOPEN_MS once the coordinator drops it. */
class IdleCrowd {
  private readonly port: number;
  private readonly sockets = new Set<Socket>();
  private stopped = false;
  opened = 0;
  dropped = 0;

  constructor(port: number) {
    this.port = port;
  }

  start(): void {
    for (let i = 0; i < HELD; i++) this.open(KINDS[i % KINDS.length]);
  }

  held(): number {
    return this.sockets.size;
  }

  private open(kind: IdleKind): void {
    if (this.stopped) return;
    const socket = connect(this.port, '127.0.0.1');
    this.opened++;
    this.sockets.add(socket);
    socket.on('error', () => undefined);
    socket.once('connect', () => {
      if (kind === 'silent TCP') return;
      const parts: Buffer[] = [Buffer.from(upgradeRequest(this.port).request)];
      // 0xc1 is the one byte MessagePack never uses (spec, "formats"): refused before a hello.
      if (kind === 'refused, ignoring the close')
        parts.push(frame(FIN | OP.binary, Uint8Array.of(0xc1)));
      socket.write(Buffer.concat(parts));
      // Never reads again: the close frame and everything after it stay unread.
      socket.pause();
    });
    socket.once('close', () => {
      this.sockets.delete(socket);
      if (this.stopped) return;
      this.dropped++;
      setTimeout(() => this.open(kind), REOPEN_MS);
    });
  }

  stop(): void {
    this.stopped = true;
    for (const socket of this.sockets) socket.destroy();
  }
}

const started: CliProcess[] = [];
const crowds: IdleCrowd[] = [];
const relays: Relay[] = [];
afterEach(async () => {
  for (const p of started.splice(0)) p.kill();
  for (const c of crowds.splice(0)) c.stop();
  for (const r of relays.splice(0)) await r.close();
});

/** Answers the challenge with an ups frame (a stale one, as a worker might hold); resolves to the error sent back. */
function upBeforeHello(url: string): Promise<{ code: string; message: string }> {
  return new Promise((resolve, reject) => {
    const ws = new WebSocket(url, { perMessageDeflate: false });
    ws.on('error', reject);
    ws.on('message', (data: Buffer) => {
      const message = decodeMessage(new Uint8Array(data), 1024 * 1024) as Record<string, unknown>;
      if (message.type === 'challenge') {
        // The quickstart's method, FedLin, has the exchanges 'gradient' and 'local'.
        ws.send(
          encodeRoundFrame(
            {
              type: 'ups',
              round: 3,
              exchange: 'local',
              entries: [
                {
                  clientId: 0,
                  fields: {},
                  updateNotFinite: true,
                  localSteps: 5,
                  computeSeconds: 0,
                  waitSeconds: 0,
                  transferSeconds: 0,
                },
              ],
            },
            { gradient: {}, local: {} },
          ),
          { binary: true },
        );
        return;
      }
      ws.close();
      resolve({ code: String(message.code), message: String(message.message) });
    });
  });
}

function worker(url: string, keyFile: string, name: string): CliProcess {
  const cli = new CliProcess([
    'worker',
    url,
    '--key-file',
    keyFile,
    '--capacity',
    '4',
    '--name',
    name,
  ]);
  started.push(cli);
  return cli;
}

async function crowdAround(url: string): Promise<IdleCrowd> {
  const crowd = new IdleCrowd(Number(new URL(url).port));
  crowds.push(crowd);
  crowd.start();
  const deadline = Date.now() + 10_000;
  while (crowd.held() < HELD && Date.now() < deadline)
    await new Promise((resolve) => setTimeout(resolve, 50));
  return crowd;
}

describe(`${HELD} idle connections held open`, () => {
  it('keep no worker out, and the run writes the records of a clean run', async () => {
    const out = freshDir('idle');
    const keyFile = writeKeyFile(out, KEY);
    const coordinator = new CliProcess(
      quickstartCoordinatorArgs(out, keyFile, 2, [
        '--tweak',
        'run.rounds:60',
        '--tweak',
        'run.target:0',
      ]),
    );
    started.push(coordinator);
    const url = (await coordinator.waitForStderr(/listening on (ws:\/\/\S+)/, 30_000))[1];
    const crowd = await crowdAround(url);
    expect(crowd.held()).toBe(HELD);
    const workers = [worker(url, keyFile, 'honest-1'), worker(url, keyFile, 'honest-2')];
    await coordinator.waitForStderr(/worker "honest-2" hosts clients/, 30_000);
    expect((await coordinator.exit(60_000)).code, coordinator.stderr).toBe(0);
    for (const w of workers) expect((await w.exit(20_000)).code, w.stderr).toBe(0);
    crowd.stop();
    console.log(
      `idle connections opened ${crowd.opened}, dropped by the coordinator ${crowd.dropped}`,
    );
    // More were opened than the coordinator holds without a hello: it dropped the oldest ones.
    expect(crowd.dropped).toBeGreaterThan(0);
    const summary = JSON.parse(readFileSync(join(out, 'outcome.json'), 'utf8')) as {
      distributed: { limitClosings: Record<string, number> };
    };
    console.log('limit closings:', summary.distributed.limitClosings);
    expect(summary.distributed.limitClosings.E_LIMIT_UNAUTHENTICATED).toBeGreaterThan(0);
    expectRecordsOfCleanRun(out);
  }, 120_000);

  it('keep no worker from resuming after its link is cut', async () => {
    const out = freshDir('idle-resume');
    const keyFile = writeKeyFile(out, KEY);
    // Wall clock, 10 ms steps: rounds last long enough to cut in (as in resume.test.ts).
    const coordinator = new CliProcess(
      quickstartCoordinatorArgs(out, keyFile, 3, [
        '--resume-grace-seconds',
        '10',
        '--tweak',
        'timing.clock:wall',
        '--tweak',
        'timing.stepCostSeconds:0.01',
        '--tweak',
        'run.rounds:60',
        '--tweak',
        'run.target:0',
      ]),
    );
    started.push(coordinator);
    const url = (await coordinator.waitForStderr(/listening on (ws:\/\/\S+)/, 30_000))[1];
    const relay = new Relay(Number(new URL(url).port));
    relays.push(relay);
    const relayUrl = await relay.listen();
    const crowd = await crowdAround(url);
    const direct = [worker(url, keyFile, 'direct-a'), worker(url, keyFile, 'direct-b')];
    const relayed = worker(relayUrl, keyFile, 'relayed');
    await coordinator.waitForStderr(/worker "relayed" hosts clients/, 30_000);
    // The order rule a resuming worker keeps: ups before the hello are refused as such.
    const refusal = await upBeforeHello(url);
    expect(refusal.code).toBe('E_ORDER');
    expect(refusal.message).toMatch(/the first message must be hello, got "ups"/);
    await coordinator.waitForStderr(/round (?:[4-9]|[1-9]\d+)\//, 30_000);
    relay.cut();
    await coordinator.waitForStderr(/worker "relayed" disconnected in round \d+/, 10_000);
    await coordinator.waitForStderr(/worker "relayed" resumed in round \d+/, 20_000);
    expect((await coordinator.exit(60_000)).code, coordinator.stderr).toBe(0);
    for (const w of [...direct, relayed]) expect((await w.exit(20_000)).code, w.stderr).toBe(0);
    crowd.stop();
    const summary = JSON.parse(readFileSync(join(out, 'outcome.json'), 'utf8')) as {
      distributed: { lostWorkers: unknown[] };
    };
    expect(summary.distributed.lostWorkers).toEqual([]);
  }, 120_000);
});
