// Complete scenarios for data tests: the schema fills every default, the test names only the
// fields it is about.

import { scenarioSchema, type Scenario, type ScenarioInput } from '../../src/scenario/schema.js';

export function scenarioWith(
  problem: ScenarioInput['problem'],
  data: ScenarioInput['data'],
  clientCount: number,
  seed = 17,
): Scenario {
  return scenarioSchema.parse({
    name: 'data-test',
    seed,
    problem,
    data,
    clients: { count: clientCount },
    method: { name: 'fedavg' },
    run: { rounds: 1 },
  });
}
