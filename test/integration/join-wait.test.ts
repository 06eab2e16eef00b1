// A worker started before its coordinator (real processes on 127.0.0.1, as a cluster starts its
// pods in no set order) waits with backoff, saying so, and joins once the coordinator listens.
// The wait's end (--join-wait-seconds spent) is held in test/client/connection.test.ts.

import { createServer } from 'node:net';
import { join } from 'node:path';
import { afterEach, describe, expect, it } from 'vitest';
import { CliProcess, freshDir, repoRoot, writeKeyFile } from './cli-process.js';

const started: CliProcess[] = [];
afterEach(() => {
  for (const p of started.splice(0)) p.kill();
});

function start(args: string[]): CliProcess {
  const p = new CliProcess(args, { ROUNDWIRE_KEY_FILE: '' });
  started.push(p);
  return p;
}

/** A port that was free a moment ago: nothing listens there until the test starts something. */
async function freePort(): Promise<number> {
  const probe = createServer();
  await new Promise<void>((r) => probe.listen(0, '127.0.0.1', () => r()));
  const port = (probe.address() as { port: number }).port;
  await new Promise<void>((r) => probe.close(() => r()));
  return port;
}

const WAITING_LINE = /waiting for the coordinator at ws:\/\/127\.0\.0\.1:\d+ \(attempt (\d+): /;

describe('a worker started before its coordinator', () => {
  it('waits with backoff, then joins and the run completes', async () => {
    const dir = freshDir('join-wait');
    const key = writeKeyFile(dir, 'a-key-shared-by-both-processes');
    const port = await freePort();
    const worker = start([
      'worker',
      `ws://127.0.0.1:${port}`,
      '--key-file',
      key,
      '--capacity',
      '8',
      '--join-wait-seconds',
      '60',
    ]);
    // The first attempt waits nothing; the backoff's first delay is 0.25 s (client/connection.ts).
    await worker.waitForStderr(WAITING_LINE, 20_000);
    expect(worker.stderr).toMatch(/next attempt in 0\.25 s, 0\.00 of 60 s of waiting spent/);
    const coordinator = start([
      'coordinator',
      join(repoRoot, 'scenarios/quickstart.yaml'),
      '--listen',
      `127.0.0.1:${port}`,
      '--key-file',
      key,
      '--workers-wait-seconds',
      '40',
      '--out',
      join(dir, 'results'),
      '--tweak',
      'run.rounds:3',
      '--tweak',
      'run.target:0',
    ]);
    const [workerExit, coordinatorExit] = await Promise.all([
      worker.exit(60_000),
      coordinator.exit(60_000),
    ]);
    expect(coordinatorExit.code, coordinator.stderr).toBe(0);
    expect(workerExit.code, worker.stderr).toBe(0);
    expect(worker.stderr).toMatch(/worker: done \(.*\), hosted clients 0, 1, 2, 3, 4, 5, 6, 7/);
  }, 90_000);
});
