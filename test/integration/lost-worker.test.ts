// A worker killed mid-run (SIGKILL: no goodbye, the OS closes its socket) is marked lost, its
// clients leave the run, and the run still completes every round and records them all.

import { readFileSync } from 'node:fs';
import { join } from 'node:path';
import { describe, expect, it } from 'vitest';
import type { RoundRecord } from '../../src/engine/round-record.js';
import { CliProcess, freshDir, readJsonLines, repoRoot, survivorsAfter } from './cli-process.js';

describe('a worker killed mid-round', () => {
  it('is marked lost and the run completes with every round recorded', async () => {
    const out = freshDir('lost');
    // Wall clock, 20 ms steps: a round lasts about a tenth of a second, long enough to kill in.
    const cli = new CliProcess([
      'run',
      join(repoRoot, 'scenarios/quickstart.yaml'),
      '--out',
      out,
      '--tweak',
      'run.workers:4',
      '--tweak',
      'run.rounds:30',
      '--tweak',
      'run.target:0',
      '--tweak',
      'timing.clock:wall',
      '--tweak',
      'timing.stepCostSeconds:0.02',
    ]);
    try {
      await cli.waitForStderr(/round 2\/30/, 30_000);
      const victim = cli.workerPids()[1];
      process.kill(victim, 'SIGKILL');
      const exit = await cli.exit(50_000);
      expect(exit.code, cli.stderr).toBe(0);
      const rounds = readJsonLines<RoundRecord>(join(out, 'rounds.jsonl'));
      expect(rounds.map((r) => r.round)).toEqual(Array.from({ length: 31 }, (_, i) => i));
      const summary = JSON.parse(readFileSync(join(out, 'outcome.json'), 'utf8')) as {
        stopReason: string;
        distributed: { lostWorkers: { workerName: string; clientIds: number[]; round: number }[] };
      };
      expect(summary.stopReason).toBe('rounds-complete');
      expect(summary.distributed.lostWorkers).toHaveLength(1);
      const lost = summary.distributed.lostWorkers[0];
      expect(lost.workerName).toBe('local-2');
      expect(lost.round).toBeGreaterThanOrEqual(2);
      // After the loss, the lost clients take part in no round.
      for (const r of rounds.filter((x) => x.round > lost.round)) {
        for (const id of lost.clientIds)
          expect(Object.hasOwn(r.localSteps, String(id))).toBe(false);
      }
      expect(await survivorsAfter(cli.workerPids(), 5_000)).toEqual([]);
    } finally {
      cli.kill();
    }
  }, 60_000);
});
