// Planned local steps tau_i per client, fixed for the run: one count for all, one per client, or
// a seeded draw from a uniform integer range. A round policy may lower or raise them per round
// (deadline); the plan is what the policy starts from.

import { Rng } from '../base/rng.js';
import type { CountSpec } from '../scenario/schema.js';
import { TimingError, assertIntegerInRange } from './errors.js';

/** tau_i for clients 0..clientCount-1; a uniform range draws client i from Rng.derive(seed, 'local-steps', i). */
export function localStepsFor(spec: CountSpec, clientCount: number, seed: number): Int32Array {
  assertIntegerInRange('clientCount', clientCount, 1, 2 ** 31 - 1);
  const steps = new Int32Array(clientCount);
  if (typeof spec === 'number') {
    assertIntegerInRange('method.localSteps', spec, 1, 2 ** 31 - 1);
    steps.fill(spec);
  } else if (Array.isArray(spec)) {
    if (spec.length !== clientCount) {
      throw new TimingError(
        'E_TIMING_LOCAL_STEPS_LENGTH',
        `method.localSteps lists ${spec.length} counts but there are ${clientCount} clients; give one per client`,
        'method.localSteps',
      );
    }
    for (let i = 0; i < clientCount; i++) {
      assertIntegerInRange(`method.localSteps[${i}]`, spec[i], 1, 2 ** 31 - 1);
      steps[i] = spec[i];
    }
  } else {
    const [min, max] = spec.uniform;
    assertIntegerInRange('method.localSteps.uniform[0]', min, 1, 2 ** 31 - 1);
    assertIntegerInRange('method.localSteps.uniform[1]', max, min, 2 ** 31 - 1);
    for (let i = 0; i < clientCount; i++)
      steps[i] = min + Rng.derive(seed, 'local-steps', i).nextInt(max - min + 1);
  }
  return steps;
}
