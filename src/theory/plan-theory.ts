// The oracle's answer for a scenario: x*, f*, the certificate and the constants. Solving is the
// expensive part of a short run, so results are cached per hash of the parts of the plan that
// define the problem (seed, problem, data, clients); method, timing and compression do not
// change the optimum.

import type { Scenario } from '../scenario/schema.js';
import { hashOf } from '../scenario/plan-hash.js';
import { buildProblemInstance, type ProblemInstance } from '../data/problem-instance.js';
import { solveOptimum, type OptimumCertificate } from './oracle.js';
import { computeConstants, type ProblemConstants } from './constants.js';

export interface PlanTheory {
  problemHash: string;
  instance: ProblemInstance;
  optimum: OptimumCertificate;
  constants: ProblemConstants;
}

/** Distinct problems kept per process; a compare run touches a handful. */
export const theoryCacheEntriesMax = 8;
const cache = new Map<string, PlanTheory>();

export function problemHashOf(scenario: Scenario): string {
  return hashOf({
    seed: scenario.seed,
    problem: scenario.problem,
    data: scenario.data,
    clients: scenario.clients,
  });
}

export function theoryOf(scenario: Scenario): PlanTheory {
  const problemHash = problemHashOf(scenario);
  const hit = cache.get(problemHash);
  if (hit) {
    cache.delete(problemHash);
    cache.set(problemHash, hit);
    return hit;
  }
  const instance = buildProblemInstance(scenario);
  const optimum = solveOptimum(instance.global);
  const constants = computeConstants(instance.objectives, instance.weights, optimum.x);
  const theory: PlanTheory = { problemHash, instance, optimum, constants };
  cache.set(problemHash, theory);
  if (cache.size > theoryCacheEntriesMax) cache.delete(cache.keys().next().value as string);
  return theory;
}
