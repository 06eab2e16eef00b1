// The lint that keeps the layers (eslint.config.js, run by `npm run lint` in CI) really fails on
// a wrong import: scratch files placed in the tree import against the layer direction and in a
// cycle, and ESLint, with the project's own configuration, reports each. The scratch files are
// removed whatever happens.

import { rmSync, writeFileSync } from 'node:fs';
import { join } from 'node:path';
import { ESLint } from 'eslint';
import { afterAll, describe, expect, it } from 'vitest';
import { repoRoot } from './repository-files.js';

const SCRATCH = {
  upward: join(repoRoot, 'src/vec/zz-lint-scratch-upward.ts'),
  cycleA: join(repoRoot, 'src/vec/zz-lint-scratch-cycle-a.ts'),
  cycleB: join(repoRoot, 'src/vec/zz-lint-scratch-cycle-b.ts'),
  serverFromCore: join(repoRoot, 'src/engine/zz-lint-scratch-server.ts'),
  clean: join(repoRoot, 'src/engine/zz-lint-scratch-clean.ts'),
};

afterAll(() => {
  for (const file of Object.values(SCRATCH)) rmSync(file, { force: true });
});

async function ruleIdsOf(file: string): Promise<string[]> {
  const eslint = new ESLint({ cwd: repoRoot });
  const [result] = await eslint.lintFiles([file]);
  return result.messages.map((m) => m.ruleId ?? m.message);
}

describe('the layer lint', () => {
  it('fails on an import that points up the layers, from the core into server/, and on a cycle; passes a downward import', async () => {
    writeFileSync(
      SCRATCH.upward,
      "import { runInProcess } from '../engine/in-process-engine.js';\nexport const f = runInProcess;\n",
    );
    writeFileSync(
      SCRATCH.cycleA,
      "import { b } from './zz-lint-scratch-cycle-b.js';\nexport const a = (): number => b() + 1;\n",
    );
    writeFileSync(
      SCRATCH.cycleB,
      "import { a } from './zz-lint-scratch-cycle-a.js';\nexport const b = (): number => a() - 1;\n",
    );
    writeFileSync(
      SCRATCH.serverFromCore,
      "import { RoundDriver } from '../../server/rounds.js';\nexport const d = RoundDriver;\n",
    );
    writeFileSync(
      SCRATCH.clean,
      "import { dot } from '../vec/kernels.js';\nexport const g = dot;\n",
    );
    expect(await ruleIdsOf(SCRATCH.upward)).toContain('import-x/no-restricted-paths');
    expect(await ruleIdsOf(SCRATCH.cycleA)).toContain('import-x/no-cycle');
    expect(await ruleIdsOf(SCRATCH.serverFromCore)).toContain('import-x/no-restricted-paths');
    expect(await ruleIdsOf(SCRATCH.clean)).toEqual([]);
  }, 60_000);
});
