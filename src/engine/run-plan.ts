// The resolved plan of a run: the scenario plus every number that follows from it and that
// both ends must agree on. The coordinator sends the wire part (scenario, method settings,
// dimension) to workers in the welcome; everything else any process rebuilds from the seed.

import type { Scenario } from '../scenario/schema.js';
import type { MethodConfig } from '../algorithm/method.js';
import type { WirePlan } from '../protocol/wire-plan.js';
import { hashOf } from '../scenario/plan-hash.js';
import { drawLinks, type ClientLink } from '../timing/links.js';
import { localStepsFor } from '../timing/local-steps.js';
import { participantCount } from '../timing/participation.js';
import { assertPolicyFitsRound } from '../timing/round-policy.js';
import { assertMemoryFits } from './memory-estimate.js';
import { assertRecordsFit } from './records-limit.js';

export type { WirePlan };

export interface RunPlan extends WirePlan {
  planHash: string;
  clientCount: number;
  /** tau_i of the plan (a round policy may change it per round) */
  plannedSteps: Int32Array;
  /** p_i, summing to 1 */
  weights: Float64Array;
  /** every client's link, by client id */
  links: readonly ClientLink[];
}

/** What the plan needs from the problem: its dimension, weights and smoothness L of f. */
export interface PlanProblemFacts {
  dim: number;
  weights: Float64Array;
  smoothness: number;
}

/** 'auto' resolves to eta = 1/L of the global objective (the classical safe step for gradient descent). */
export function resolveStepSize(scenario: Scenario, smoothness: number): number {
  return scenario.method.stepSize === 'auto' ? 1 / smoothness : scenario.method.stepSize;
}

export function methodConfigFor(scenario: Scenario, smoothness: number): MethodConfig {
  return {
    clientCount: scenario.clients.count,
    stepSize: resolveStepSize(scenario, smoothness),
    serverStepSize: scenario.method.serverStepSize,
    proxCoefficient: scenario.method.proxCoefficient,
    proxTolerance: scenario.method.proxTolerance,
  };
}

/**
 * Refuses what the schema cannot see field by field, with exit code 2, before any work: both
 * runtimes plan through here, so they accept and refuse the same scenarios. That includes a
 * scenario too large for memory (memory-estimate.ts) or whose records could outgrow the disk
 * (records-limit.ts), refused before any shard is built.
 */
export function assertPlannable(scenario: Scenario): void {
  const { participation } = scenario.method;
  const perRound = participantCount(participation, scenario.clients.count);
  assertPolicyFitsRound(
    scenario.timing.policy,
    perRound,
    `method.participation ${participation} of clients.count ${scenario.clients.count}`,
  );
  assertRecordsFit(scenario);
  assertMemoryFits(scenario);
}

export function resolveRunPlan(scenario: Scenario, facts: PlanProblemFacts): RunPlan {
  assertPlannable(scenario);
  const wire: WirePlan = {
    scenario,
    methodConfig: methodConfigFor(scenario, facts.smoothness),
    dim: facts.dim,
  };
  return {
    ...wire,
    planHash: hashOf(wire),
    clientCount: scenario.clients.count,
    plannedSteps: localStepsFor(scenario.method.localSteps, scenario.clients.count, scenario.seed),
    links: drawLinks(scenario.timing.links, scenario.clients.count, scenario.seed),
    weights: facts.weights,
  };
}
