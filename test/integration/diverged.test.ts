// A run whose updates stop being finite ends with stop reason "diverged" in both runtimes, on
// the same model, instead of a crash (in process) or a wait for the exchange time limit
// (distributed). FedAvg on the quickstart's least squares with eta = 100 while L_i is about 1.1 to
// 1.5 (`roundwire theory`): every local step multiplies the error along a client's top
// eigenvector by |1 - eta L_i| > 1 (common practice: gradient descent on a quadratic diverges
// for eta > 2/L), so the iterates overflow within the 200 rounds. Two workers host four
// clients each, so the clients work on pool threads and their failure crosses a thread boundary.

import { readFileSync } from 'node:fs';
import { join } from 'node:path';
import { describe, expect, it } from 'vitest';
import type { RoundRecord } from '../../src/engine/round-record.js';
import { resultFiles } from '../../src/results/results-folder.js';
import { runCli } from '../cli/run-cli.js';
import { freshDir, overrideArgs, readJsonLines } from './cli-process.js';

const OVERRIDES = {
  'method.name': 'fedavg',
  'method.stepSize': '100',
  'run.rounds': '200',
  'run.target': '0',
  'run.workers': '2',
};

describe('a diverging run', () => {
  it('stops as diverged in both runtimes, on the same model', async () => {
    const dir = freshDir('diverged');
    const inProcess = await runCli([
      'run',
      'scenarios/quickstart.yaml',
      '--in-process',
      '--json',
      '--out',
      join(dir, 'in-process'),
      ...overrideArgs(OVERRIDES),
    ]);
    const distributed = await runCli(
      [
        'run',
        'scenarios/quickstart.yaml',
        '--json',
        '--out',
        join(dir, 'distributed'),
        ...overrideArgs(OVERRIDES),
      ],
      60_000,
    );
    for (const r of [inProcess, distributed]) {
      expect(r.code, r.stderr).toBe(0);
      expect((JSON.parse(r.stdout) as { stopReason: string }).stopReason).toBe('diverged');
    }
    const rounds = (name: string) =>
      readJsonLines<RoundRecord>(join(dir, name, resultFiles.rounds)).map((r) => r.round);
    expect(rounds('distributed')).toEqual(rounds('in-process'));
    expect(rounds('in-process').length).toBeLessThan(201);
    expect(
      readFileSync(join(dir, 'distributed', resultFiles.modelBinary)).equals(
        readFileSync(join(dir, 'in-process', resultFiles.modelBinary)),
      ),
    ).toBe(true);
  }, 90_000);
});
