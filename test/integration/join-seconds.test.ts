// Waiting for workers is not the run's wall time: a coordinator whose only worker arrives late
// (real processes on 127.0.0.1) counts wall seconds, per round and in total, from the first
// round, and reports the wait apart as outcome.json's seconds.join.

import { readFileSync } from 'node:fs';
import { join } from 'node:path';
import { afterEach, describe, expect, it } from 'vitest';
import { CliProcess, freshDir, readJsonLines, repoRoot } from './cli-process.js';

const started: CliProcess[] = [];
afterEach(() => {
  for (const p of started.splice(0)) p.kill();
});

/** How long the worker is held back; long beside a three-round quickstart run (well under a second). */
const LATE_WORKER_SECONDS = 2;

describe('join time', () => {
  it('is reported as seconds.join and left out of wall seconds', async () => {
    const dir = freshDir('join-seconds');
    const out = join(dir, 'results');
    const spawnedMs = performance.now();
    const coordinator = new CliProcess(
      [
        'coordinator',
        join(repoRoot, 'scenarios/quickstart.yaml'),
        '--listen',
        '127.0.0.1:0',
        '--workers-wait-seconds',
        '40',
        '--out',
        out,
        '--tweak',
        'run.rounds:3',
        '--tweak',
        'run.target:0',
      ],
      {
        ROUNDWIRE_KEY_FILE: '',
      },
    );
    started.push(coordinator);
    const keyPath = (await coordinator.waitForStderr(/key file: (\S+) \(/, 30_000))[1];
    const url = (
      await coordinator.waitForStderr(/listening on (ws:\/\/127\.0\.0\.1:\d+)/, 5_000)
    )[1];
    await new Promise((resolve) => setTimeout(resolve, LATE_WORKER_SECONDS * 1000));
    started.push(
      new CliProcess(['worker', url, '--key-file', keyPath, '--capacity', '8', '--name', 'late']),
    );
    const exit = await coordinator.exit(60_000);
    const totalSeconds = (performance.now() - spawnedMs) / 1000;
    expect(exit.code, coordinator.stderr).toBe(0);

    const outcome = JSON.parse(readFileSync(join(out, 'outcome.json'), 'utf8')) as {
      seconds: { wall: number; join: number };
    };
    expect(outcome.seconds.join).toBeGreaterThanOrEqual(LATE_WORKER_SECONDS);
    expect(outcome.seconds.wall).toBeGreaterThan(0);
    expect(outcome.seconds.wall + outcome.seconds.join).toBeLessThan(totalSeconds);
    // Round 0 is recorded as the rounds start: the wait for the worker is not in it.
    const rounds = readJsonLines<{ round: number; wallSeconds: number }>(join(out, 'rounds.jsonl'));
    expect(rounds[0].wallSeconds).toBeLessThan(LATE_WORKER_SECONDS);
    expect(rounds.at(-1)!.wallSeconds).toBeLessThanOrEqual(outcome.seconds.wall);
  }, 90_000);
});
