// Fastest-k on the wall clock (DESIGN.md, Timing: "the first k updates count; the rest are
// discarded and recorded as dropped"): with k = 6 and 2 of 8 clients ten times slower
// (two-class slowdown, fraction 0.25, factor 10), arrival order decides, and the two slow
// clients arrive last. They take part in every round (each round's work supersedes the
// discarded work of the round before, so they start from the current model like everyone
// else) and are recorded as dropped in every round.
//
// Round 1 is exempt: it also carries each worker's start-up (the client pool's threads load
// their modules and warm up on their first task), a delay of the same order as the slow
// clients' lag that can fall on a fast client; from round 2 on, only the models' step times
// separate the clients.

import { join } from 'node:path';
import { describe, expect, it } from 'vitest';
import type { ClientRoundRecord, RoundRecord } from '../../src/engine/round-record.js';
import { loadScenarioFile } from '../../src/scenario/load-scenario.js';
import { drawSlowdowns } from '../../src/timing/slowdown.js';
import { CliProcess, freshDir, readJsonLines, repoRoot } from './cli-process.js';

const SCENARIO = join(repoRoot, 'scenarios/quickstart.yaml');
const ROUNDS = 8;
const COMMON = [
  'timing.clock:wall',
  'timing.slowdown:{kind: two-class, fraction: 0.25, factor: 10}',
  'timing.policy:{kind: fastest-k, k: 6}',
  `run.rounds:${ROUNDS}`,
  'run.target:0',
];
// At a slowdown factor of 10, a slow client's update comes 9 step costs per step after a fast
// one's: 450 ms for FedAvg's 5 local steps of 10 ms, and for FedLin's one-step gradient
// exchange with steps of 50 ms; well above the scheduling delays of a few processes sharing two
// cores.
const FEDAVG = [
  ...COMMON,
  'timing.stepCostSeconds:0.01',
  'method.name:fedavg',
  'method.stepPolicy:fixed',
];
const FEDLIN = [...COMMON, 'timing.stepCostSeconds:0.05'];

/** The clients the scenario's speed model makes slow (slowdown above 1), from the model itself. */
function slowClientIds(tweaks: string[]): number[] {
  const scenario = loadScenarioFile(SCENARIO, tweaks);
  const slowdowns = drawSlowdowns(scenario.timing, scenario.clients.count, scenario.seed);
  return [...slowdowns.keys()].filter((id) => slowdowns[id] > 1);
}

async function run(
  name: string,
  tweaks: string[],
): Promise<{ rounds: RoundRecord[]; clients: ClientRoundRecord[] }> {
  const out = freshDir(name);
  const cli = new CliProcess([
    'run',
    SCENARIO,
    '--out',
    out,
    '--tweak',
    'run.workers:2',
    ...tweaks.flatMap((o) => ['--tweak', o]),
  ]);
  try {
    const exit = await cli.exit(50_000);
    expect(exit.code, cli.stderr).toBe(0);
    // Superseded ups are never an error: the worker withholds them, the coordinator records a late one.
    expect(cli.stderr).not.toMatch(/E_ROUND/);
  } finally {
    cli.kill();
  }
  return {
    rounds: readJsonLines<RoundRecord>(join(out, 'rounds.jsonl')),
    clients: readJsonLines<ClientRoundRecord>(join(out, 'clients.jsonl')),
  };
}

describe('wall-clock fastest-k with two clients 10x slower', () => {
  it('FedAvg: the slow clients take part in every round and are dropped in every round after the first', async () => {
    const tweaks = FEDAVG;
    const slow = slowClientIds(tweaks);
    // fraction 0.25 of 8 clients (the scenario's two-class definition).
    expect(slow).toHaveLength(2);
    const { rounds, clients } = await run('wall-fastest-k-fedavg', tweaks);
    expect(rounds.map((r) => r.round)).toEqual(Array.from({ length: ROUNDS + 1 }, (_, i) => i));
    for (const r of rounds.slice(2)) {
      expect(r.dropped, `round ${r.round}`).toEqual(slow);
      expect(Object.keys(r.localSteps), `round ${r.round}`).toHaveLength(8);
    }
    for (const c of clients.filter((x) => x.round >= 2))
      expect(c.dropped, `round ${c.round}, client ${c.clientId}`).toBe(slow.includes(c.clientId));
  }, 60_000);

  it('FedLin: the slow clients are dropped at the gradient exchange and never do local work on a stale gradient', async () => {
    const tweaks = FEDLIN;
    const slow = slowClientIds(tweaks);
    expect(slow).toHaveLength(2);
    const { rounds, clients } = await run('wall-fastest-k-fedlin', tweaks);
    expect(rounds.map((r) => r.round)).toEqual(Array.from({ length: ROUNDS + 1 }, (_, i) => i));
    for (const r of rounds.slice(2)) expect(r.dropped, `round ${r.round}`).toEqual(slow);
    for (let round = 1; round <= ROUNDS; round++) {
      const gradient = clients.filter((c) => c.round === round && c.exchange === 'gradient');
      const local = clients.filter((c) => c.round === round && c.exchange === 'local');
      if (round >= 2)
        expect(
          gradient.map((c) => c.clientId).sort((a, b) => a - b),
          `round ${round}`,
        ).toEqual([0, 1, 2, 3, 4, 5, 6, 7]);
      // FedLin's local steps correct with grad f_i(x) of this round's x (DESIGN.md, Methods): a
      // client works locally only after its gradient of this round counted.
      const counted = new Set(gradient.filter((c) => !c.dropped).map((c) => c.clientId));
      for (const c of local)
        expect(counted.has(c.clientId), `round ${round}, client ${c.clientId}`).toBe(true);
    }
  }, 60_000);
});
