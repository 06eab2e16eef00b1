// A run whose values explode or stop being finite ends with stop reason "diverged" in both
// runtimes, in the round where that first happened, on the same model and records, with its
// results folder and report written: no crash (in process), no wait for the exchange time limit
// (distributed; it is 300 s, beyond the test's bound). FedAvg on the quickstart's least squares,
// whose L_i are about 1.1 to 1.5 (`roundwire theory`): every local step multiplies the error
// along a client's top eigenvector by |1 - eta L_i| (common practice: gradient descent on a
// quadratic diverges for eta > 2/L).
// - eta = 100: after one round of 5 local steps f - f* is finite and past the explosion bound,
//   1e12 x max(1, f(x_0) - f*) (src/engine/explosion-bound.ts).
// - eta = 1e300: the second local step overflows (1e300 squared is past float64's largest,
//   about 1.8e308; IEEE 754), so every client's first update is not finite and none is folded in.
// Two workers host four clients each, so the clients work on pool threads.

import { existsSync, readFileSync } from 'node:fs';
import { join } from 'node:path';
import { describe, expect, it } from 'vitest';
import type { ClientRoundRecord, RoundRecord } from '../../src/engine/round-record.js';
import { EXPLOSION_FACTOR } from '../../src/engine/explosion-bound.js';
import { resultFiles } from '../../src/results/results-folder.js';
import { reportFileName } from '../../src/commands/report-command.js';
import { runCli } from '../cli/run-cli.js';
import { freshDir, overrideArgs, readJsonLines } from './cli-process.js';

const OVERRIDES = {
  'method.name': 'fedavg',
  'run.rounds': '200',
  'run.target': '0',
  'run.workers': '2',
};

/** A record as both runtimes write it: wall seconds and the network's byte layers aside. */
function comparable<T extends RoundRecord | ClientRoundRecord>(record: T): unknown {
  const copy = structuredClone(record) as Partial<RoundRecord>;
  delete copy.wallSeconds;
  delete copy.bytes!.encoded;
  delete copy.bytes!.wire;
  return copy;
}

/** Runs the step size in both runtimes; returns each one's folder after the common checks. */
async function runBoth(stepSize: string): Promise<{ inProcess: string; distributed: string }> {
  const dir = freshDir('diverged');
  const folders = { inProcess: join(dir, 'in-process'), distributed: join(dir, 'distributed') };
  const args = (out: string) => [
    'run',
    'scenarios/quickstart.yaml',
    '--json',
    '--out',
    out,
    ...overrideArgs({ ...OVERRIDES, 'method.stepSize': stepSize }),
  ];
  const inProcess = await runCli([...args(folders.inProcess), '--in-process']);
  const distributed = await runCli(args(folders.distributed), 60_000);
  for (const [r, out] of [
    [inProcess, folders.inProcess],
    [distributed, folders.distributed],
  ] as const) {
    expect(r.code, r.stderr).toBe(0);
    expect((JSON.parse(r.stdout) as { stopReason: string }).stopReason).toBe('diverged');
    for (const file of [...Object.values(resultFiles), reportFileName])
      expect(existsSync(join(out, file)), file).toBe(true);
  }
  const rounds = (out: string) => readJsonLines<RoundRecord>(join(out, resultFiles.rounds));
  const clients = (out: string) => readJsonLines<ClientRoundRecord>(join(out, resultFiles.clients));
  expect(rounds(folders.distributed).map(comparable)).toEqual(
    rounds(folders.inProcess).map(comparable),
  );
  expect(clients(folders.distributed).map(comparable)).toEqual(
    clients(folders.inProcess).map(comparable),
  );
  expect(
    readFileSync(join(folders.distributed, resultFiles.modelBinary)).equals(
      readFileSync(join(folders.inProcess, resultFiles.modelBinary)),
    ),
  ).toBe(true);
  return folders;
}

describe('a diverging run', () => {
  it('stops in the round where f - f* first passes the explosion bound, in both runtimes', async () => {
    const { inProcess } = await runBoth('100');
    const rounds = readJsonLines<RoundRecord>(join(inProcess, resultFiles.rounds));
    const boundMax = EXPLOSION_FACTOR * Math.max(1, rounds[0].suboptimality!);
    const last = rounds[rounds.length - 1];
    // every round before the last within the bound, the last one past it: finite, yet caught
    for (const r of rounds.slice(0, -1)) expect(r.suboptimality!).toBeLessThanOrEqual(boundMax);
    expect(Number.isFinite(last.suboptimality)).toBe(true);
    expect(last.suboptimality!).toBeGreaterThan(boundMax);
  }, 90_000);

  it('stops in the round of the first non-finite update, folding none of it in', async () => {
    const { inProcess } = await runBoth('1e300');
    const rounds = readJsonLines<RoundRecord>(join(inProcess, resultFiles.rounds));
    expect(rounds.map((r) => r.round)).toEqual([0, 1]);
    // no update counted: the model is still x_0 (zero), so f - f* is the initial one
    expect(rounds[1].dropped).toEqual([0, 1, 2, 3, 4, 5, 6, 7]);
    expect(rounds[1].suboptimality).toBe(rounds[0].suboptimality);
    const model = readFileSync(join(inProcess, resultFiles.modelBinary));
    expect(model.equals(Buffer.alloc(model.length))).toBe(true);
  }, 90_000);
});
