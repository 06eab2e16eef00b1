// `roundwire theory <scenario>`: the oracle's constants for a scenario, as a table or JSON.

import type { Scenario } from '../scenario/schema.js';
import { theoryOf } from '../theory/plan-theory.js';
import { assertMemoryFits } from '../engine/memory-estimate.js';
import { formatTable } from '../report/text-table.js';

export interface TheoryReport {
  scenario: string;
  problemHash: string;
  problem: Scenario['problem']['kind'];
  dimension: number;
  clientCount: number;
  sampleCount: number;
  smoothness: number;
  strongConvexity: number;
  conditionNumber: number;
  hessianAtOptimum: { smallest: number; largest: number };
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
}

export function theoryReport(scenario: Scenario): TheoryReport {
  // The oracle builds every shard and dense Hessians: a scenario too large is refused first.
  assertMemoryFits(scenario);
  const t = theoryOf(scenario);
  const c = t.constants;
  return {
    scenario: scenario.name,
    problemHash: t.problemHash,
    problem: scenario.problem.kind,
    dimension: t.instance.dim,
    clientCount: t.instance.objectives.length,
    sampleCount: t.instance.sampleCounts.reduce((a, b) => a + b, 0),
    smoothness: c.smoothness,
    strongConvexity: c.strongConvexity,
    conditionNumber: c.conditionNumber,
    hessianAtOptimum: c.hessianAtOptimum,
    heterogeneity: c.heterogeneity,
    optimum: {
      loss: t.optimum.loss,
      gradientNorm: t.optimum.gradientNorm,
      iterations: t.optimum.iterations,
      x: Array.from(t.optimum.x),
    },
    clients: c.clients.map((k, i) => ({
      id: i,
      samples: t.instance.sampleCounts[i],
      weight: t.instance.weights[i],
      smoothness: k.smoothness,
      strongConvexity: k.strongConvexity,
      gradientNormAtOptimum: k.gradientNormAtOptimum,
      minimizerDistance: k.minimizerDistance,
    })),
  };
}

export function formatTheoryReport(r: TheoryReport): string {
  const exact = r.problem === 'least-squares' ? 'exact' : 'bound';
  const title = `${r.scenario} (problem ${r.problemHash.slice(0, 12)}): ${r.problem}, dimension ${r.dimension}, ${r.clientCount} clients, ${r.sampleCount} samples`;
  const summary = formatTable(
    ['quantity', 'value', 'note'],
    [
      ['smoothness L', r.smoothness, exact],
      ['strong convexity mu', r.strongConvexity, exact],
      ['condition number L/mu', r.conditionNumber, exact],
      ['Hessian at x*: smallest', r.hessianAtOptimum.smallest, 'Lanczos'],
      ['Hessian at x*: largest', r.hessianAtOptimum.largest, 'Lanczos'],
      ['heterogeneity sum p_i |grad f_i(x*)|^2', r.heterogeneity, '0 iff x* minimizes every f_i'],
      ['optimum f*', r.optimum.loss, ''],
      [
        'certificate |grad f(x*)|',
        r.optimum.gradientNorm,
        `after ${r.optimum.iterations} iterations`,
      ],
    ],
  );
  const clients = formatTable(
    ['client', 'samples', 'weight p_i', 'L_i', 'mu_i', '|grad f_i(x*)|', '|x_i* - x*|'],
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
  return `${title}\n\n${summary}\n\n${clients}\n`;
}
