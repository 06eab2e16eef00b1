// A worker with the key that floods the coordinator and never reads what it is sent (its socket
// paused): the coordinator stays responsive, its /metrics answering within a second while the
// floods go on, and drops each flooder; the run then goes ahead with honest workers. Three floods
// at once, each from an authenticated extra worker: one-byte frames that are no MessagePack
// (dropped past the bad-message limit), valid heartbeats (past the message rate), and pings whose
// pongs pile up unread (past ws's bound on pending pongs).

import WebSocket from 'ws';
import { afterEach, describe, expect, it } from 'vitest';
import { encodeMessage } from '../../src/protocol/index.js';
import { CliProcess, freshDir, quickstartCoordinatorArgs, writeKeyFile } from './cli-process.js';
import { authenticate, type AuthenticatedPeer } from './hostile-connections.js';

const KEY = 'a-key-for-the-flood-test';
/** Frames written per turn of the event loop, so that the flooder's own timers still run. */
const FRAMES_PER_TURN = 1000;
const FLOOD_MS_MAX = 20_000;
/** The responsiveness asked of the coordinator while it is flooded (issue 10). */
const METRICS_ANSWER_MS_MAX = 1000;

const started: CliProcess[] = [];
afterEach(() => {
  for (const p of started.splice(0)) p.kill();
});

/** Stops reading: what the coordinator sends piles up in its queue and the kernel's buffers. */
function stopReading(peer: AuthenticatedPeer): void {
  (peer.ws as unknown as { _socket: { pause: () => void } })._socket.pause();
}

/** Sends `send()` FRAMES_PER_TURN times per turn until `stop()` says so or the time is up. */
async function flood(send: () => void, stop: () => boolean): Promise<number> {
  const endMs = Date.now() + FLOOD_MS_MAX;
  let frames = 0;
  while (!stop() && Date.now() < endMs) {
    for (let i = 0; i < FRAMES_PER_TURN; i++) send();
    frames += FRAMES_PER_TURN;
    await new Promise((resolve) => setImmediate(resolve));
  }
  return frames;
}

async function fetchWithin(url: URL, timeoutMs: number): Promise<{ ms: number; text: string }> {
  const startMs = performance.now();
  const response = await fetch(url, { signal: AbortSignal.timeout(timeoutMs) });
  const text = await response.text();
  return { ms: performance.now() - startMs, text };
}

describe('a flooding peer that never reads', () => {
  it('is dropped while /metrics keeps answering within a second, and the run goes ahead', async () => {
    const out = freshDir('flood');
    const keyFile = writeKeyFile(out, KEY);
    const coordinator = new CliProcess(
      quickstartCoordinatorArgs(out, keyFile, 2, [
        '--tweak',
        'run.rounds:20',
        '--metrics',
        '127.0.0.1:0',
      ]),
    );
    started.push(coordinator);
    const metricsUrl = new URL(
      (await coordinator.waitForStderr(/metrics on (http:\/\/\S+)/, 30_000))[1],
    );
    const url = (await coordinator.waitForStderr(/listening on (ws:\/\/\S+)/, 30_000))[1];

    const names = ['garbage', 'heartbeats', 'pings'] as const;
    const peers = new Map<string, AuthenticatedPeer>();
    for (const name of names) {
      const peer = await authenticate(url, KEY, name, 1);
      await coordinator.waitForStderr(new RegExp(`worker "${name}" joined`), 10_000);
      stopReading(peer);
      peers.set(name, peer);
    }
    const left = new Map<string, boolean>(names.map((n) => [n, false]));
    for (const name of names)
      void coordinator
        .waitForStderr(new RegExp(`worker "${name}" left before the run started`), FLOOD_MS_MAX)
        .then(() => left.set(name, true))
        .catch(() => undefined);
    const flooding = (): boolean => [...left.values()].some((gone) => !gone);

    // 0xc1 is the one byte MessagePack never uses (spec, "formats").
    const garbage = Uint8Array.of(0xc1);
    const heartbeat = encodeMessage({ type: 'heartbeat', sentAtMs: 1 });
    const pingPayload = Buffer.alloc(125, 7);
    const send = (name: string, act: (ws: WebSocket) => void) => () => {
      const ws = peers.get(name)!.ws;
      if (ws.readyState === WebSocket.OPEN) act(ws);
    };
    const polls: number[] = [];
    const poller = (async () => {
      while (flooding()) {
        polls.push((await fetchWithin(metricsUrl, METRICS_ANSWER_MS_MAX)).ms);
        await new Promise((resolve) => setTimeout(resolve, 100));
      }
    })();
    const sent = await Promise.all([
      flood(
        send('garbage', (ws) => ws.send(garbage, { binary: true })),
        () => left.get('garbage')!,
      ),
      flood(
        send('heartbeats', (ws) => ws.send(heartbeat, { binary: true })),
        () => left.get('heartbeats')!,
      ),
      flood(
        send('pings', (ws) => ws.ping(pingPayload)),
        () => left.get('pings')!,
      ),
    ]);
    await poller;
    console.log(
      `frames sent before each flooder was dropped: ${names.map((n, i) => `${n} ${sent[i]}`).join(', ')}; /metrics answered ${polls.length} times during the floods, slowest in ${Math.max(...polls).toFixed(0)} ms`,
    );
    expect([...left.values()]).toEqual([true, true, true]);
    expect(polls.length).toBeGreaterThan(0);
    expect(Math.max(...polls)).toBeLessThan(METRICS_ANSWER_MS_MAX);
    expect(coordinator.stderr).toMatch(/worker "garbage" dropped \(E_LIMIT_BAD_MESSAGES\)/);
    expect(coordinator.stderr).toMatch(/worker "heartbeats" dropped \(E_LIMIT_MESSAGE_RATE\)/);
    const metrics = (await fetchWithin(metricsUrl, METRICS_ANSWER_MS_MAX)).text;
    expect(metrics).toMatch(
      /roundwire_protocol_errors_total\{code="E_LIMIT_BAD_MESSAGES",origin="limit"\} 1\b/,
    );
    expect(metrics).toMatch(
      /roundwire_protocol_errors_total\{code="E_LIMIT_MESSAGE_RATE",origin="limit"\} 1\b/,
    );
    for (const peer of peers.values()) peer.ws.terminate();

    const workers = [1, 2].map(
      (i) =>
        new CliProcess([
          'worker',
          url,
          '--key-file',
          keyFile,
          '--capacity',
          '4',
          '--name',
          `honest-${i}`,
        ]),
    );
    started.push(...workers);
    expect((await coordinator.exit(60_000)).code, coordinator.stderr).toBe(0);
    for (const worker of workers) expect((await worker.exit(20_000)).code, worker.stderr).toBe(0);
  }, 120_000);
});
