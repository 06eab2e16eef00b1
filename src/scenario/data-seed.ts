// The data's own seed: shards, the partition and the per-client sample counts draw from it, so
// that repeated runs of a comparison can vary every other random choice (speeds, participation,
// minibatches, compression) over fixed data. Absent, it is the scenario's seed, as it always was.

import type { Scenario } from './schema.js';

export function dataSeedOf(scenario: Pick<Scenario, 'seed' | 'dataSeed'>): number {
  return scenario.dataSeed ?? scenario.seed;
}
