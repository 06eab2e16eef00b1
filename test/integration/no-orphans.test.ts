// `roundwire run` starts worker processes and must leave none behind, whether the run succeeds
// or is interrupted with SIGINT (exit code 130, as shells report 128 + SIGINT's number 2).

import { join } from 'node:path';
import { describe, expect, it } from 'vitest';
import { CliProcess, freshDir, repoRoot, survivorsAfter } from './cli-process.js';

describe('no worker process outlives roundwire run', () => {
  it('on success', async () => {
    const cli = new CliProcess([
      'run',
      join(repoRoot, 'scenarios/quickstart.yaml'),
      '--out',
      freshDir('orphans-ok'),
      '--tweak',
      'run.rounds:3',
      '--tweak',
      'run.workers:3',
    ]);
    try {
      const exit = await cli.exit(50_000);
      expect(exit.code, cli.stderr).toBe(0);
      expect(cli.workerPids()).toHaveLength(3);
      expect(await survivorsAfter(cli.workerPids(), 5_000)).toEqual([]);
    } finally {
      cli.kill();
    }
  }, 60_000);

  it('on SIGINT', async () => {
    const cli = new CliProcess([
      'run',
      join(repoRoot, 'scenarios/quickstart.yaml'),
      '--out',
      freshDir('orphans-int'),
      '--tweak',
      'run.rounds:1000',
      '--tweak',
      'run.target:0',
      '--tweak',
      'run.workers:3',
      '--tweak',
      'timing.clock:wall',
      '--tweak',
      'timing.stepCostSeconds:0.01',
    ]);
    try {
      await cli.waitForStderr(/round \d+\/1000/, 30_000);
      const pids = cli.workerPids();
      expect(pids).toHaveLength(3);
      cli.child.kill('SIGINT');
      const exit = await cli.exit(30_000);
      expect(exit.code).toBe(130);
      expect(await survivorsAfter(pids, 5_000)).toEqual([]);
    } finally {
      cli.kill();
    }
  }, 60_000);
});
