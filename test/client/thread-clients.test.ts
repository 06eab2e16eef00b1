// Which pool thread computes which client (client/thread-clients.ts): every client on exactly
// one thread, heaviest first to the least loaded thread (longest processing time first, common
// practice for balancing independent jobs), the same deal on every call.

import { describe, expect, it } from 'vitest';
import { loadScenarioFile } from '../../src/scenario/load-scenario.js';
import { clientsByThread } from '../../client/thread-clients.js';
import { exchangeFlopsOf } from '../../client/hosting-mode.js';
import type { WirePlan } from '../../src/engine/run-plan.js';

function planOf(tweaks: string[], dim: number): WirePlan {
  const scenario = loadScenarioFile('scenarios/quickstart.yaml', tweaks);
  return { scenario, dim, methodConfig: undefined as never };
}

describe('clients by thread', () => {
  it('splits equal clients evenly, each on one thread, ascending within a thread', () => {
    const plan = planOf(['data.samplesPerClient:4000', 'method.localSteps:10'], 500);
    const dealt = clientsByThread(plan, [0, 2, 4, 6], 2);
    expect(dealt).toEqual([
      [0, 4],
      [2, 6],
    ]);
  });

  it('balances unequal clients by the flops of an exchange', () => {
    // tau_i = i + 1: loads 1, 2, ..., 8 (times 4 n d) over 3 threads.
    const plan = planOf(
      ['data.samplesPerClient:100', 'method.localSteps:[1, 2, 3, 4, 5, 6, 7, 8]'],
      20,
    );
    const ids = [0, 1, 2, 3, 4, 5, 6, 7];
    const dealt = clientsByThread(plan, ids, 3);
    expect(dealt.flat().sort((a, b) => a - b)).toEqual(ids);
    const flops = exchangeFlopsOf(plan, ids);
    const loads = dealt.map((t) => t.reduce((sum, id) => sum + flops[id], 0));
    // Client i weighs i + 1 units; dealt by hand, heaviest first to the least loaded thread (ties
    // to the lower thread): clients 7, 6, 5 open the threads, then 4 -> third (11), 3 -> second
    // (11), 2 -> first (11), 1 -> first (13), 0 -> second (12).
    expect(loads).toEqual([13, 12, 11].map((units) => units * flops[0]));
    expect(dealt).toEqual([
      [1, 2, 7],
      [0, 3, 6],
      [4, 5],
    ]);
  });

  it('leaves no thread empty when there are fewer clients than threads, and deals the same each time', () => {
    const plan = planOf(['data.samplesPerClient:100'], 20);
    expect(clientsByThread(plan, [3, 5], 4)).toEqual([[3], [5]]);
    expect(clientsByThread(plan, [1, 2, 3, 4, 5], 2)).toEqual(
      clientsByThread(plan, [1, 2, 3, 4, 5], 2),
    );
  });
});
