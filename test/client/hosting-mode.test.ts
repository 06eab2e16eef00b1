// Where a worker's clients compute (client/hosting-mode.ts): inline when one exchange of every
// hosted client is lighter than a pool task's own cost, on the pool otherwise; the estimate is
// 4 n_i d tau_i flops (a gradient step reads the n_i x d data twice, a product and a
// combination: common practice for counting dense matrix-vector work).

import { describe, expect, it } from 'vitest';
import { loadScenarioFile } from '../../src/scenario/load-scenario.js';
import {
  exchangeFlopsMax,
  hostsInline,
  INLINE_EXCHANGE_FLOPS_MAX,
} from '../../client/hosting-mode.js';
import { samplesForAllClients } from '../../src/data/sample-counts.js';
import type { WirePlan } from '../../src/engine/run-plan.js';

function planOf(tweaks: string[], dim: number): WirePlan {
  const scenario = loadScenarioFile('scenarios/quickstart.yaml', tweaks);
  return { scenario, dim, methodConfig: undefined as never };
}

describe('hosting mode', () => {
  it('counts 4 n_i d tau_i for the heaviest hosted client', () => {
    const plan = planOf(['method.localSteps:[1, 2, 3, 4, 5, 6, 7, 8]'], 20);
    const samples = samplesForAllClients(
      plan.scenario.data.source === 'synthetic' ? plan.scenario.data.samplesPerClient : 1,
      8,
      plan.scenario.seed,
    );
    const expected = Math.max(...[2, 5].map((id) => 4 * samples[id] * 20 * (id + 1)));
    expect(exchangeFlopsMax(plan, [2, 5])).toBe(expected);
  });

  it('takes a deadline policy at its step cap', () => {
    const plan = planOf(['timing.policy:{kind: deadline, budgetSeconds: 1, stepsMax: 50}'], 20);
    const samples = samplesForAllClients(
      plan.scenario.data.source === 'synthetic' ? plan.scenario.data.samplesPerClient : 1,
      8,
      plan.scenario.seed,
    );
    expect(exchangeFlopsMax(plan, [0])).toBe(4 * samples[0] * 20 * 50);
  });

  it('hosts light clients inline, heavy ones on the pool, and one client or one thread inline', () => {
    const light = planOf(['data.samplesPerClient:20', 'method.localSteps:1'], 1000);
    expect(exchangeFlopsMax(light, [0, 1])).toBe(80_000);
    expect(hostsInline(light, [0, 1], 2)).toBe(true);
    const heavy = planOf(['data.samplesPerClient:4000', 'method.localSteps:10'], 500);
    expect(exchangeFlopsMax(heavy, [0, 1])).toBeGreaterThanOrEqual(INLINE_EXCHANGE_FLOPS_MAX);
    expect(hostsInline(heavy, [0, 1], 2)).toBe(false);
    expect(hostsInline(heavy, [0], 2)).toBe(true);
    expect(hostsInline(heavy, [0, 1], 1)).toBe(true);
  });
});
