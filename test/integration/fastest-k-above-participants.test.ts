// A fastest-k whose k exceeds the participants of a round is refused the same way by both
// runtimes: when the plan is made, before any round (and, distributed, before any worker
// starts), with exit code 2 (README, Exit codes) and one message naming timing.policy.k.
// quickstart has 8 clients; participation 0.5 gives 4 per round, so k = 5 is one too many.

import { existsSync } from 'node:fs';
import { join } from 'node:path';
import { describe, expect, it } from 'vitest';
import { runCli } from '../cli/run-cli.js';
import { freshDir, overrideArgs } from './cli-process.js';

const OVERRIDES = {
  'method.participation': '0.5',
  'timing.policy': '{kind: fastest-k, k: 5}',
  'run.rounds': '3',
};
const MESSAGE =
  'roundwire: timing.policy.k: fastest-k counts the first k updates of a round, but a round has 4 participants (method.participation 0.5 of clients.count 8); give k <= 4, got 5\n';

describe('fastest-k with k above the participants of a round', () => {
  it('is refused alike in process, distributed and by compare, before any work', async () => {
    const dir = freshDir('fastest-k-refused');
    const runs = {
      inProcess: await runCli([
        'run',
        'scenarios/quickstart.yaml',
        '--in-process',
        '--out',
        join(dir, 'in-process'),
        ...overrideArgs(OVERRIDES),
      ]),
      distributed: await runCli([
        'run',
        'scenarios/quickstart.yaml',
        '--out',
        join(dir, 'distributed'),
        ...overrideArgs(OVERRIDES),
      ]),
      compare: await runCli([
        'compare',
        'scenarios/quickstart.yaml',
        '--out',
        join(dir, 'compare'),
        ...overrideArgs(OVERRIDES),
        '--ladder',
        'method.name:fedavg/fedlin',
      ]),
    };
    for (const [name, r] of Object.entries(runs)) {
      expect(r.code, `${name}: ${r.stderr}`).toBe(2);
      expect(r.stderr, name).toBe(MESSAGE);
      expect(existsSync(join(dir, name === 'inProcess' ? 'in-process' : name)), name).toBe(false);
    }
  }, 60_000);
});
