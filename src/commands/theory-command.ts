// `roundwire theory <scenario>`: the oracle's constants for a scenario, as a table or JSON.

import type { Scenario } from '../scenario/schema.js';
import {
  knownTheoryDetails,
  theoryDetailsOf,
  theoryOf,
  type PlanTheory,
} from '../theory/plan-theory.js';
import { assertMemoryFits } from '../engine/memory-estimate.js';
import type { ClientConstants } from '../theory/constants.js';
import { formatTable } from '../report/text-table.js';
import { RATE_COMPARISON_HEADER, boundRows } from '../report/rate-comparison.js';
import { resolveStepSize } from '../engine/run-plan.js';
import { localStepsFor } from '../timing/local-steps.js';
import {
  boundInputsFor,
  publishedBounds,
  type PublishedBound,
} from '../theory/published-bounds.js';
import { clientConstantsInParallel } from '../../server/oracle-pool.js';
import { droppedRowCountOf } from '../data/dropped-rows.js';

export interface TheoryReport {
  scenario: string;
  problemHash: string;
  problem: Scenario['problem']['kind'];
  dimension: number;
  clientCount: number;
  sampleCount: number;
  /** rows of a data set or data file dropped for a missing value */
  droppedRowCount: number;
  smoothness: number;
  strongConvexity: number;
  conditionNumber: number;
  hessianAtOptimum: { smallest: number; largest: number; converged: boolean };
  heterogeneity: number;
  /** x* in full, so that another tool can compare against it */
  optimum: { loss: number; gradientNorm: number; iterations: number; x: number[] };
  clients: {
    id: number;
    samples: number;
    weight: number;
    smoothness: number;
    strongConvexity: number;
    gradientNormAtOptimum: number;
    minimizerDistance: number | null;
  }[];
  /** the published rate bounds for the scenario's method, step size and conditions */
  bounds: PublishedBound[];
}

/**
 * Client work worth a thread pool, in sample-feature values over all clients. A cost estimate,
 * not a measurement (the shared machine was too loaded to time the pool against one thread):
 * each pool thread loads the code and rebuilds its clients' shards, about as long as one pass over
 * the data, so the pool pays only when each client needs many passes (a Newton-CG or CG solve on
 * its full shard) over data large enough that a second of thread start-up is small beside it.
 */
const POOLED_CLIENT_WORK_MIN = 1e7;

/**
 * The clients' constants, from a thread pool where their own minimizers need a solve on the full
 * shard (logistic and softmax, or least squares with at least as many samples as features) and
 * the data is large enough; here otherwise.
 */
async function clientConstantsOf(
  scenario: Scenario,
  theory: PlanTheory,
): Promise<ClientConstants[] | null> {
  const { instance } = theory;
  const dualOnly =
    scenario.problem.kind === 'least-squares' &&
    instance.sampleCounts.every((n) => n < instance.dim);
  const work = instance.sampleCounts.reduce((sum, n) => sum + n * instance.dim, 0);
  if (dualOnly || work < POOLED_CLIENT_WORK_MIN || instance.sampleCounts.length < 2) return null;
  return clientConstantsInParallel(scenario, theory.optimum.x, instance.sampleCounts);
}

export async function theoryReport(scenario: Scenario): Promise<TheoryReport> {
  // The oracle builds every shard, and its pool a second copy: a scenario too large is refused first.
  assertMemoryFits(scenario, 'theory');
  const t = theoryOf(scenario);
  const c = t.constants;
  const details = knownTheoryDetails(t) ?? theoryDetailsOf(t, await clientConstantsOf(scenario, t));
  return {
    scenario: scenario.name,
    problemHash: t.problemHash,
    problem: scenario.problem.kind,
    dimension: t.instance.dim,
    clientCount: t.instance.objectives.length,
    sampleCount: t.instance.sampleCounts.reduce((a, b) => a + b, 0),
    droppedRowCount: droppedRowCountOf(scenario),
    smoothness: c.smoothness,
    strongConvexity: c.strongConvexity,
    conditionNumber: c.conditionNumber,
    hessianAtOptimum: details.hessianAtOptimum,
    heterogeneity: c.heterogeneity,
    optimum: {
      loss: t.optimum.loss,
      gradientNorm: t.optimum.gradientNorm,
      iterations: t.optimum.iterations,
      x: Array.from(t.optimum.x),
    },
    clients: details.clients.map((k, i) => ({
      id: i,
      samples: t.instance.sampleCounts[i],
      weight: t.instance.weights[i],
      smoothness: k.smoothness,
      strongConvexity: k.strongConvexity,
      gradientNormAtOptimum: k.gradientNormAtOptimum,
      minimizerDistance: k.minimizerDistance,
    })),
    bounds: publishedBounds(
      boundInputsFor(
        scenario,
        {
          dim: t.instance.dim,
          plannedSteps: localStepsFor(
            scenario.method.localSteps,
            scenario.clients.count,
            scenario.seed,
          ),
          stepSize: resolveStepSize(scenario, c.smoothness),
        },
        c,
      ),
    ),
  };
}

export function formatTheoryReport(r: TheoryReport): string {
  // A perceptron has a reference run's end where the convex kinds have x* (plan-theory.ts).
  const nonconvex = r.problem === 'perceptron';
  const exact = nonconvex ? 'none: nonconvex' : r.problem === 'least-squares' ? 'exact' : 'bound';
  const at = nonconvex ? 'x_ref' : 'x*';
  const curvatureNote = r.hessianAtOptimum.converged
    ? 'Lanczos'
    : 'Lanczos estimate: not converged within its step cap';
  const title = `${r.scenario} (problem ${r.problemHash.slice(0, 12)}): ${r.problem}, dimension ${r.dimension}, ${r.clientCount} clients, ${r.sampleCount} samples${r.droppedRowCount > 0 ? ` (${r.droppedRowCount} rows dropped for a missing value)` : ''}`;
  const summary = formatTable(
    ['quantity', 'value', 'note'],
    [
      ['smoothness L', r.smoothness, exact],
      ['strong convexity mu', r.strongConvexity, exact],
      ['condition number L/mu', r.conditionNumber, exact],
      [`Hessian at ${at}: smallest`, r.hessianAtOptimum.smallest, curvatureNote],
      [`Hessian at ${at}: largest`, r.hessianAtOptimum.largest, curvatureNote],
      [
        `heterogeneity sum p_i |grad f_i(${at})|^2`,
        r.heterogeneity,
        nonconvex ? 'at the reference point' : '0 iff x* minimizes every f_i',
      ],
      nonconvex
        ? ['reference loss f_ref', r.optimum.loss, 'a reference, not an optimum']
        : ['optimum f*', r.optimum.loss, ''],
      [
        `certificate |grad f(${at})|`,
        r.optimum.gradientNorm,
        `after ${r.optimum.iterations} iterations`,
      ],
    ],
  );
  const clients = formatTable(
    ['client', 'samples', 'weight p_i', 'L_i', 'mu_i', `|grad f_i(${at})|`, `|x_i* - ${at}|`],
    r.clients.map((k) => [
      k.id,
      k.samples,
      k.weight,
      k.smoothness,
      k.strongConvexity,
      k.gradientNormAtOptimum,
      k.minimizerDistance,
    ]),
  );
  const bounds = formatTable([...RATE_COMPARISON_HEADER], boundRows(r.bounds));
  return `${title}\n\n${summary}\n\n${clients}\n\n${bounds}\n`;
}
