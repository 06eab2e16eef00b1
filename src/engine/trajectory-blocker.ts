// Why a scenario has no predicted trajectory (predicted-trajectory.ts): the ideal run is one run
// only where nothing in a round is random and tau_i stay the same from round to round. Kept apart
// from the trajectory so that the memory estimate can ask before anything is built.

import type { Scenario } from '../scenario/schema.js';

/** Why a scenario has no single ideal run, or null. */
export function trajectoryBlocker(scenario: Scenario): string | null {
  if (scenario.method.gradient !== 'full') return 'minibatch gradients make every round random';
  if (scenario.method.participation < 1) return 'partial participation makes every round random';
  if (
    scenario.timing.policy.kind === 'deadline' &&
    (scenario.timing.jitter > 0 || scenario.timing.transient.probability > 0)
  )
    return 'a deadline with jitter changes tau_i every round';
  return null;
}
