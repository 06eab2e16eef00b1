// Joining a cluster as README.md's "A laptop cluster" describes it, with real processes on
// 127.0.0.1: a coordinator on loopback given no key file writes a fresh one readable by its user
// only and says where; a worker given another key is refused (E_AUTH) before it learns anything
// of the plan; a worker started as `roundwire worker ws://HOST:PORT --key-file F --capacity N`
// joins, hosts N clients and the run completes. The results folder then holds outcome.json and
// no key, and the key file is gone with the coordinator.

import { existsSync, readdirSync, readFileSync, statSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { dirname, join } from 'node:path';
import { afterEach, describe, expect, it } from 'vitest';
import { CliProcess, freshDir, repoRoot, writeKeyFile } from './cli-process.js';

const started: CliProcess[] = [];
afterEach(() => {
  for (const p of started.splice(0)) p.kill();
});

/** A command with no key file named by the environment it inherits. */
function start(args: string[]): CliProcess {
  const p = new CliProcess(args, { ROUNDWIRE_KEY_FILE: '' });
  started.push(p);
  return p;
}

interface Outcome {
  method: string;
  rounds: number;
  stopReason: string;
  suboptimality: { initial: number; final: number };
  rate: { measured: number | null; predicted: number | null };
  floor: { measured: number | null; predicted: number | null };
  roundsToTarget: number | null;
  bytes: {
    payload: { up: number; down: number };
    encoded: { up: number; down: number };
    wire: { up: number; down: number };
  };
  seconds: { virtual: number; wall: number };
  distributed: { workers: { workerName: string }[]; lostWorkers: unknown[] };
}

describe('joining a coordinator on loopback', () => {
  it('writes a private key file, refuses a wrong key, and runs with a worker holding the right one', async () => {
    const dir = freshDir('joining');
    const out = join(dir, 'results');
    const coordinator = start([
      'coordinator',
      join(repoRoot, 'scenarios/quickstart.yaml'),
      '--listen',
      '127.0.0.1:0',
      '--workers-min',
      '1',
      '--workers-wait-seconds',
      '40',
      '--out',
      out,
      '--tweak',
      'run.rounds:3',
      '--tweak',
      'run.target:0',
    ]);
    const keyPath = (await coordinator.waitForStderr(/key file: (\S+) \(/, 30_000))[1];
    const url = (
      await coordinator.waitForStderr(/listening on (ws:\/\/127\.0\.0\.1:\d+)/, 5_000)
    )[1];
    // One line says where; the file is this user's alone, in a private folder of the temp dir.
    expect(coordinator.stderr.match(/key file: /g)).toHaveLength(1);
    expect(coordinator.stderr).toContain(`workers on this machine join with --key-file ${keyPath}`);
    expect(dirname(dirname(keyPath))).toBe(tmpdir());
    expect(statSync(keyPath).mode & 0o777).toBe(0o600);
    expect(statSync(dirname(keyPath)).mode & 0o777).toBe(0o700);

    const wrong = start([
      'worker',
      url,
      '--key-file',
      writeKeyFile(dir, 'a-key-the-coordinator-never-wrote'),
      '--capacity',
      '8',
      '--name',
      'wrong-key',
    ]);
    const wrongExit = await wrong.exit(30_000);
    expect(wrongExit.code, wrong.stderr).toBe(1);
    expect(wrong.stderr).toMatch(/refused by the coordinator \(E_AUTH\)/);
    expect(wrong.stderr).not.toMatch(/hosting clients/);
    await coordinator.waitForStderr(/connection \d+ refused \(E_AUTH\)/, 5_000);

    const worker = start([
      'worker',
      url,
      '--key-file',
      keyPath,
      '--capacity',
      '8',
      '--name',
      'right-key',
    ]);
    await coordinator.waitForStderr(/worker "right-key" joined with capacity 8 /, 30_000);
    const exit = await coordinator.exit(60_000);
    expect(exit.code, coordinator.stderr).toBe(0);
    const workerExit = await worker.exit(20_000);
    expect(workerExit.code, worker.stderr).toBe(0);
    // Capacity 8 for quickstart's 8 clients: this one worker hosts them all.
    expect(worker.stderr).toContain('hosting clients 0, 1, 2, 3, 4, 5, 6, 7');

    // The key file went with the coordinator; the results folder never held it.
    expect(existsSync(dirname(keyPath))).toBe(false);
    const files = readdirSync(out).sort();
    expect(files).toEqual([
      'clients.jsonl',
      'model.f64',
      'model.json',
      'outcome.json',
      'report.html',
      'resolved-scenario.yaml',
      'rounds.jsonl',
    ]);
    const outcome = JSON.parse(readFileSync(join(out, 'outcome.json'), 'utf8')) as Outcome;
    expect(outcome.method).toBe('fedlin');
    expect(outcome.stopReason).toBe('rounds-complete');
    expect(outcome.rounds).toBe(3);
    expect(outcome.suboptimality.final).toBeLessThan(outcome.suboptimality.initial);
    for (const key of ['measured', 'predicted'] as const) {
      expect(outcome.rate).toHaveProperty(key);
      expect(outcome.floor).toHaveProperty(key);
    }
    expect(outcome).toHaveProperty('roundsToTarget');
    for (const layer of ['payload', 'encoded', 'wire'] as const)
      expect(outcome.bytes[layer].up).toBeGreaterThan(0);
    expect(outcome.seconds.wall).toBeGreaterThan(0);
    expect(outcome.distributed.workers.map((w) => w.workerName)).toEqual(['right-key']);
    expect(outcome.distributed.lostWorkers).toEqual([]);
  }, 90_000);
});
