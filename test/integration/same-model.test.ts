// The distributed runtime and the in-process engine drive the very same method functions in
// the same order; with the virtual clock (no wall-clock dependence) they must end on the same
// model bit for bit (DESIGN.md, Layout). Every method runs in `roundwire run` with 4 worker
// processes hosting 8 clients over 127.0.0.1, and its model.f64 is compared byte for byte with
// runInProcess's model.

import { readFileSync } from 'node:fs';
import { join } from 'node:path';
import { describe, expect, it } from 'vitest';
import { loadScenarioFile } from '../../src/scenario/load-scenario.js';
import { runInProcess } from '../../src/engine/in-process-engine.js';
import { CliProcess, freshDir, repoRoot, survivorsAfter } from './cli-process.js';

const METHODS = ['gd', 'fedavg', 'fedprox', 'fednova', 'scaffold', 'fedlin', 'fedsplit'] as const;

function modelBytes(x: Float64Array): Buffer {
  const out = Buffer.alloc(x.length * 8);
  x.forEach((v, j) => out.writeDoubleLE(v, j * 8));
  return out;
}

describe('roundwire run (4 workers, 8 clients) equals runInProcess bit for bit', () => {
  for (const method of METHODS) {
    it(method, async () => {
      const tweaks = [`method.name:${method}`, 'run.rounds:3', 'run.workers:4', 'run.target:0'];
      const out = freshDir(`same-${method}`);
      const run = new CliProcess(['run', join(repoRoot, 'scenarios/quickstart.yaml'), '--out', out, ...tweaks.flatMap((o) => ['--tweak', o])]);
      try {
        const exit = await run.exit(50_000);
        expect(exit.code, run.stderr).toBe(0);
        expect(run.workerPids()).toHaveLength(4);
        const distributed = readFileSync(join(out, 'model.f64'));
        const engine = runInProcess(loadScenarioFile(join(repoRoot, 'scenarios/quickstart.yaml'), tweaks));
        expect(distributed.equals(modelBytes(engine.finalModel))).toBe(true);
        expect(await survivorsAfter(run.workerPids(), 5_000)).toEqual([]);
      } finally {
        run.kill();
      }
    }, 60_000);
  }
});
