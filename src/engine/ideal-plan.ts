// A plan's ideal twin: the same problem, method, budgets, step sizes and round policy, with every
// message exact (no compression on either channel) and every client in every round. The round
// map predicts from it, and the field-shape probe reads the method's fields from it.

import type { Scenario } from '../scenario/schema.js';
import { hashOf } from '../scenario/plan-hash.js';
import type { RunPlan } from './run-plan.js';

const exactChannel: Scenario['compression']['uplink'] = {
  default: { kind: 'none', errorFeedback: true, unbiased: false, values: 'f64' },
  fields: {},
};

export function idealPlan(plan: RunPlan): RunPlan {
  const scenario: Scenario = {
    ...plan.scenario,
    method: { ...plan.scenario.method, participation: 1 },
    compression: { uplink: exactChannel, downlink: exactChannel },
  };
  return {
    ...plan,
    scenario,
    planHash: hashOf({ scenario, methodConfig: plan.methodConfig, dim: plan.dim }),
  };
}
