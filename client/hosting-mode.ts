// Where a worker's clients compute: on the worker's own thread, one after another, or on a
// piscina pool (client-task.ts). A pool task carries the client's state in and out as a
// snapshot and its down by copy, which costs a fraction of a millisecond whatever the work; a
// client whose exchange is lighter than that computes faster inline. Measured on the 2-core
// machine (1,000 least-squares clients, d = 1,000, 20 samples, one local step, 2 workers): the
// pool's task posting alone took about 0.12 s a round on each worker's main thread, the work
// itself 0.11 s a round for all 1,000 clients in process. Either way every client computes the
// same bits: only the thread differs.

import type { WirePlan } from '../src/engine/run-plan.js';
import { dataShape } from '../src/engine/memory-estimate.js';
import { localStepsFor } from '../src/timing/local-steps.js';

/**
 * Floating-point operations of one client's exchange below which it works inline: about half a
 * millisecond of gradient work, the order of a pool task's own cost (common practice: batch work
 * onto threads only when it outweighs the hand-over).
 */
export const INLINE_EXCHANGE_FLOPS_MAX = 1e6;

/** Flops of a gradient step over n samples in d dimensions: two passes of 2 n d (a product, a combination). */
const FLOPS_PER_SAMPLE_ENTRY = 4;

/** The most flops one exchange of each of `clientIds` may take: 4 n_i d tau_i, tau_i at its cap. */
export function exchangeFlopsOf(plan: WirePlan, clientIds: readonly number[]): number[] {
  const { scenario } = plan;
  const samples = dataShape(scenario).samplesPerClient;
  const steps = localStepsFor(scenario.method.localSteps, scenario.clients.count, scenario.seed);
  const policy = scenario.timing.policy;
  return clientIds.map((id) => {
    const tau = policy.kind === 'deadline' ? policy.stepsMax : steps[id];
    return FLOPS_PER_SAMPLE_ENTRY * samples[id] * plan.dim * tau;
  });
}

/** The most flops one exchange of any of `clientIds` may take. */
export function exchangeFlopsMax(plan: WirePlan, clientIds: readonly number[]): number {
  return exchangeFlopsOf(plan, clientIds).reduce((most, flops) => Math.max(most, flops), 0);
}

/** Whether the clients compute on the worker's own thread. */
export function hostsInline(
  plan: WirePlan,
  clientIds: readonly number[],
  threads: number,
): boolean {
  return (
    clientIds.length <= 1 ||
    threads <= 1 ||
    exchangeFlopsMax(plan, clientIds) < INLINE_EXCHANGE_FLOPS_MAX
  );
}
