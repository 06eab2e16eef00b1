// Round policies in the distributed runtime (DESIGN.md, Timing), with 2 of 8 clients slowed
// 10x (two-class slowdown, fraction 0.25, factor 10) and the virtual clock:
// - deadline: tau_i = max(1, floor(budget / step time)), so the slow clients get a tenth of the
//   fast clients' steps; FedLin with eta/tau_i (FedLin, NeurIPS 2021: linear convergence
//   to x* whatever the tau_i) still reaches the target, while FedAvg with unequal tau_i on
//   heterogeneous clients converges to a point other than x* (Wang et al., NeurIPS 2020,
//   objective inconsistency) and stalls at a floor;
// - fastest-k with k = 6: the two slow clients finish last every round and are dropped.

import { readFileSync } from 'node:fs';
import { join } from 'node:path';
import { describe, expect, it } from 'vitest';
import type { ClientRoundRecord, RoundRecord } from '../../src/engine/round-record.js';
import { CliProcess, freshDir, readJsonLines, repoRoot } from './cli-process.js';

const SLOW_TWO = 'timing.slowdown:{kind: two-class, fraction: 0.25, factor: 10}';
// stepCostSeconds is 0.001 by default: a budget of 0.01 s holds 10 fast steps or 1 slow one.
const DEADLINE = 'timing.policy:{kind: deadline, budgetSeconds: 0.01}';

async function run(
  name: string,
  tweaks: string[],
): Promise<{
  rounds: RoundRecord[];
  clients: ClientRoundRecord[];
  summary: { stopReason: string };
}> {
  const out = freshDir(name);
  const cli = new CliProcess([
    'run',
    join(repoRoot, 'scenarios/quickstart.yaml'),
    '--out',
    out,
    '--tweak',
    'run.workers:2',
    ...tweaks.flatMap((o) => ['--tweak', o]),
  ]);
  try {
    const exit = await cli.exit(55_000);
    expect(exit.code, cli.stderr).toBe(0);
  } finally {
    cli.kill();
  }
  return {
    rounds: readJsonLines<RoundRecord>(join(out, 'rounds.jsonl')),
    clients: readJsonLines<ClientRoundRecord>(join(out, 'clients.jsonl')),
    summary: JSON.parse(readFileSync(join(out, 'outcome.json'), 'utf8')) as { stopReason: string },
  };
}

function slowClients(record: RoundRecord): string[] {
  const steps = Object.values(record.localSteps);
  const most = Math.max(...steps);
  return Object.entries(record.localSteps)
    .filter(([, s]) => s < most)
    .map(([id]) => id);
}

describe('round policies with two clients 10x slower', () => {
  it('deadline: slow clients get a tenth of the steps; FedLin reaches the target', async () => {
    const { rounds, summary } = await run('deadline-fedlin', [
      SLOW_TWO,
      DEADLINE,
      'run.rounds:150',
      'run.target:1e-8',
    ]);
    const first = rounds[1];
    expect(slowClients(first)).toHaveLength(2);
    for (const [id, steps] of Object.entries(first.localSteps))
      expect(steps).toBe(slowClients(first).includes(id) ? 1 : 10);
    expect(summary.stopReason).toBe('target-reached');
    expect(rounds[rounds.length - 1].suboptimality).toBeLessThanOrEqual(1e-8);
  }, 60_000);

  it('deadline: FedAvg stops at a floor', async () => {
    const { rounds } = await run('deadline-fedavg', [
      SLOW_TWO,
      DEADLINE,
      'method.name:fedavg',
      'method.stepPolicy:fixed',
      'run.rounds:60',
      'run.target:1e-8',
    ]);
    const last = rounds[rounds.length - 1].suboptimality!;
    const tenBefore = rounds[rounds.length - 11].suboptimality!;
    expect(rounds).toHaveLength(61);
    expect(last).toBeGreaterThan(1e-4);
    // Flat: ten more rounds change f - f* by less than a millionth of itself.
    expect(Math.abs(tenBefore - last)).toBeLessThan(1e-6 * last);
  }, 60_000);

  it('fastest-k with k = 6 drops the two slow clients every round', async () => {
    const { rounds, clients } = await run('fastest-k', [
      SLOW_TWO,
      'timing.policy:{kind: fastest-k, k: 6}',
      'run.rounds:10',
      'run.target:0',
    ]);
    // Everyone takes its planned 5 steps; the slow clients' compute is ten times the others'.
    const firstRound = clients.filter((c) => c.round === 1 && c.exchange === 'local');
    const fastest = Math.min(...firstRound.map((c) => c.computeSeconds));
    const slow = firstRound.filter((c) => c.computeSeconds > 5 * fastest).map((c) => c.clientId);
    expect(slow).toHaveLength(2);
    expect(rounds).toHaveLength(11);
    for (const r of rounds.slice(1)) expect(r.dropped).toEqual(slow);
  }, 60_000);
});
