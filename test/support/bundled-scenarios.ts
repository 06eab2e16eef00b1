// The bundled least-squares scenarios a prediction test walks: every scenarios/*.yaml of a
// quadratic objective, except the scale demonstrations (d = 20,000 in wide-least-squares.yaml),
// whose runs take minutes and whose state is past the prediction's limit.

import { readdirSync } from 'node:fs';
import { loadScenarioFile } from '../../src/scenario/load-scenario.js';

/** Synthetic scenarios above this dimension are scale demonstrations. */
export const BUNDLED_DIMENSION_MAX = 1000;

/** Paths (relative to the repository root) of the bundled least-squares scenarios of ordinary size. */
export function bundledLeastSquaresScenarios(): string[] {
  return readdirSync('scenarios')
    .filter((file) => file.endsWith('.yaml'))
    .map((file) => `scenarios/${file}`)
    .filter((path) => {
      const scenario = loadScenarioFile(path);
      return (
        scenario.problem.kind === 'least-squares' &&
        (scenario.data.source !== 'synthetic' || scenario.data.features <= BUNDLED_DIMENSION_MAX)
      );
    });
}
