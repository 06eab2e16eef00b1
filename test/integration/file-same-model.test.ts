// A data file of the user's own, split by a key column: every worker process reads the file
// itself, and the run ends on the same model bit for bit as the in-process engine on the
// scenario the run resolved. The same folder's malformed copy is refused by the CLI with exit
// code 2, naming file, line and column.

import { readFileSync, writeFileSync } from 'node:fs';
import { join } from 'node:path';
import { describe, expect, it } from 'vitest';
import { loadScenarioFile } from '../../src/scenario/load-scenario.js';
import { runInProcessInto } from '../../src/commands/run-report.js';
import { resultFiles } from '../../src/results/results-folder.js';
import { CliProcess, freshDir, survivorsAfter } from './cli-process.js';

const ROUNDS = 4;

/** Three depots of unequal size; "fleet" is a category; the target is a real value. */
function depotRows(): string {
  const lines = ['depot,fleet,distance_km,stops,minutes'];
  const depots = [
    ['east', 9],
    ['north', 14],
    ['west', 6],
  ] as const;
  let i = 0;
  for (const [depot, count] of depots) {
    for (let r = 0; r < count; r++, i++) {
      const fleet = ['van', 'bike', 'truck'][i % 3];
      const distance = 3 + ((i * 7) % 23);
      const stops = 1 + ((i * 5) % 9);
      lines.push(
        `${depot},${fleet},${distance},${stops},${20 + 2 * distance + 5 * stops + (i % 4)}`,
      );
    }
  }
  return `${lines.join('\n')}\n`;
}

function scenarioText(dataFile: string): string {
  return `name: depots
seed: 3
problem: {kind: least-squares, regularization: 0.001}
data:
  source: file
  path: ${dataFile}
  format: csv
  target: minutes
  features: {allBut: []}
  categorical: [fleet]
  partition: {kind: natural, key: depot}
clients: {count: 3}
method: {name: fedavg, localSteps: 3, stepPolicy: inverse-steps}
run: {rounds: ${ROUNDS}, workers: 2}
`;
}

describe('a CSV file split by a key column', () => {
  it('gives the same model in worker processes as in process', async () => {
    const folder = freshDir('file-same-model');
    writeFileSync(join(folder, 'depots.csv'), depotRows());
    // A relative path: it resolves against the scenario file's folder, not the working folder.
    writeFileSync(join(folder, 'depots.yaml'), scenarioText('depots.csv'));
    const out = join(folder, 'distributed');
    const run = new CliProcess(['run', join(folder, 'depots.yaml'), '--out', out]);
    try {
      const exit = await run.exit(40_000);
      expect(exit.code, run.stderr).toBe(0);
      expect(await survivorsAfter(run.workerPids(), 5_000)).toEqual([]);
    } finally {
      run.kill();
    }
    const resolved = loadScenarioFile(join(out, resultFiles.resolvedScenario));
    expect(resolved.data).toMatchObject({
      path: join(folder, 'depots.csv'),
      sha256: expect.stringMatching(/^[0-9a-f]{64}$/),
    });
    const inProcess = join(folder, 'in-process');
    runInProcessInto(resolved, inProcess);
    const model = readFileSync(join(out, resultFiles.modelBinary));
    expect(model.length).toBeGreaterThan(0);
    expect(model.equals(readFileSync(join(inProcess, resultFiles.modelBinary)))).toBe(true);
  }, 60_000);

  it('refuses a malformed copy with exit code 2, naming file, line and column', async () => {
    const folder = freshDir('file-malformed');
    const rows = depotRows().split('\n');
    rows[5] = rows[5].replace(/,(\d+),/, ',twelve,');
    writeFileSync(join(folder, 'depots.csv'), rows.join('\n'));
    writeFileSync(join(folder, 'depots.yaml'), scenarioText('depots.csv'));
    const run = new CliProcess(['theory', join(folder, 'depots.yaml')]);
    try {
      const exit = await run.exit(20_000);
      expect(exit.code, run.stderr).toBe(2);
    } finally {
      run.kill();
    }
    expect(run.stderr).toContain(
      `${join(folder, 'depots.csv')}, line 6, column 3 ("distance_km"): "twelve" is not a number`,
    );
  }, 30_000);
});
