// Where a run starts: the one rule both runtimes (and a resumed run's fresh state) follow, so
// that the server's first model is the same bits in every process. Convex objectives start at
// zero; a perceptron starts at seeded random weights (perceptron-start.ts), because
// zero is a saddle for it.

import type { Scenario } from '../scenario/schema.js';
import { perceptronLayoutOfDimension } from './perceptron-layout.js';
import { glorotUniformStart } from './perceptron-start.js';

export function initialModelOf(plan: { scenario: Scenario; dim: number }): Float64Array {
  const { problem, seed } = plan.scenario;
  if (problem.kind !== 'perceptron' || problem.hiddenWidths === undefined)
    return new Float64Array(plan.dim);
  const layers = perceptronLayoutOfDimension(plan.dim, problem.hiddenWidths, problem.classes);
  return glorotUniformStart(seed, layers, plan.dim);
}
