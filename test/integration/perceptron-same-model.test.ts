// A perceptron run is the same bits in both runtimes: its seeded start (Glorot-uniform, drawn
// from the plan's seed), every local step and the records. One `roundwire run` of the bundled
// scenario with 2 worker processes over 127.0.0.1 (minibatch gradients and top-k with error
// feedback, so that the seeded streams are in play too), then the in-process engine on the
// scenario that run resolved; model.f64 and the records (held-out test scores included) are
// compared.

import { readFileSync } from 'node:fs';
import { join } from 'node:path';
import { describe, expect, it } from 'vitest';
import { loadScenarioFile } from '../../src/scenario/load-scenario.js';
import { runInProcessInto } from '../../src/commands/run-report.js';
import { resultFiles } from '../../src/results/results-folder.js';
import type { RoundRecord } from '../../src/engine/round-record.js';
import {
  CliProcess,
  freshDir,
  overrideArgs,
  readJsonLines,
  repoRoot,
  survivorsAfter,
} from './cli-process.js';

const ROUNDS = 6;

/** A record without the wall clock and the byte layers only a network counts. */
function comparable(record: RoundRecord): unknown {
  const copy = JSON.parse(JSON.stringify(record)) as Record<string, unknown> & {
    bytes: Record<string, unknown>;
  };
  delete copy.wallSeconds;
  delete copy.bytes.encoded;
  delete copy.bytes.wire;
  return copy;
}

describe('a perceptron run in both runtimes', () => {
  it('ends on the same model and records, started away from zero', async () => {
    const out = freshDir('same-perceptron');
    const run = new CliProcess([
      'run',
      join(repoRoot, 'scenarios/iris-perceptron.yaml'),
      '--out',
      out,
      ...overrideArgs({
        'run.rounds': String(ROUNDS),
        'method.gradient': '{minibatch: 8}',
        'compression.uplink.default': '{kind: top-k, fraction: 0.25, errorFeedback: true}',
      }),
    ]);
    try {
      const exit = await run.exit(50_000);
      expect(exit.code, run.stderr).toBe(0);
      expect(await survivorsAfter(run.workerPids(), 5_000)).toEqual([]);
    } finally {
      run.kill();
    }
    const inProcess = freshDir('same-perceptron-in-process');
    runInProcessInto(loadScenarioFile(join(out, resultFiles.resolvedScenario)), inProcess);
    const model = readFileSync(join(out, resultFiles.modelBinary));
    expect(model.equals(readFileSync(join(inProcess, resultFiles.modelBinary)))).toBe(true);
    const rounds = readJsonLines<RoundRecord>(join(out, resultFiles.rounds));
    expect(rounds.map(comparable)).toEqual(
      readJsonLines<RoundRecord>(join(inProcess, resultFiles.rounds)).map(comparable),
    );
    expect(rounds).toHaveLength(ROUNDS + 1);
    // No x*: no distance anywhere, and the gap to the reference fell from the seeded start.
    expect(rounds.every((r) => r.distance === null)).toBe(true);
    expect(rounds[ROUNDS].suboptimality!).toBeLessThan(rounds[0].suboptimality!);
    // The scenario holds out a test part: the coordinator's oracle thread scored it every round,
    // and the records above hold those scores equal to the in-process engine's.
    for (const r of rounds) {
      expect(r.heldOut?.accuracy).toBeGreaterThanOrEqual(0);
      expect(r.heldOut?.clientAccuracy?.worst).toBeLessThanOrEqual(r.heldOut!.clientAccuracy!.mean);
    }
  }, 60_000);
});
