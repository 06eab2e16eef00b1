// Why a scenario has no predicted trajectory (predicted-trajectory.ts): the ideal run is one run
// only where nothing in a round is random and tau_i stay the same from round to round, and it is
// walked only where it costs little beside the run itself. Kept apart from the trajectory so
// that the memory estimate can ask before anything is built.

import type { Scenario } from '../scenario/schema.js';
import { roundMapStateEntries } from './method-state-size.js';

/**
 * Entries of the method's whole state (every client's and the server's) above which no ideal run
 * is walked: it costs one in-process round of all clients per round, which at this size is as
 * much as the run's own rounds (measured: 10,000 FedAvg clients at d = 100, 2,000,200 entries,
 * 0.5 s an ideal round beside 0.55 s a round of the run, in process on the 2-core machine), and
 * a distributed run's coordinator would do all its workers' work again. The prediction stops at
 * the same size (PREDICTION_STATE_ENTRIES_MAX in predict-run.ts).
 */
export const TRAJECTORY_STATE_ENTRIES_MAX = 2 ** 20;

/**
 * Why nothing is predicted for a perceptron: every prediction is measured against x* and built
 * on a convex objective's round map, and a nonconvex objective has neither.
 */
export const NONCONVEX_BLOCKER = 'the objective is nonconvex: no x* and no round-map theory';

/** Why a scenario has no single ideal run, or none walked, or null. */
export function trajectoryBlocker(scenario: Scenario, dim: number): string | null {
  if (scenario.problem.kind === 'perceptron') return NONCONVEX_BLOCKER;
  if (scenario.method.gradient !== 'full') return 'minibatch gradients make every round random';
  if (scenario.method.participation < 1) return 'partial participation makes every round random';
  if (
    scenario.timing.policy.kind === 'deadline' &&
    (scenario.timing.jitter > 0 || scenario.timing.transient.probability > 0)
  )
    return 'a deadline with jitter changes tau_i every round';
  const entries = roundMapStateEntries(scenario, dim);
  if (entries > TRAJECTORY_STATE_ENTRIES_MAX)
    return `the method's state has ${entries} entries (${scenario.method.name}, ${scenario.clients.count} clients, dimension ${dim}), above the limit of ${TRAJECTORY_STATE_ENTRIES_MAX} for walking the ideal run beside it`;
  return null;
}
