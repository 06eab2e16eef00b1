// Who works in a round and with what budget: participants, tau_i after the round policy, the
// step size after the step policy, and each client's step time. A pure function of (plan,
// round, exchange), so that the coordinator and the engine decide identically.

import type { RunPlan } from './run-plan.js';
import { participantsFor } from '../timing/participation.js';
import { stepSecondsFor, type SpeedModel } from '../timing/round-speed.js';
import { stepsUnderPolicy } from '../timing/round-policy.js';

export interface ClientAssignment {
  clientId: number;
  /** tau_i for this exchange: the plan's, cut by a deadline, or 1 for a gradient-only exchange */
  localSteps: number;
  /** eta_i after the step policy (eta, or eta / tau_i) */
  stepSize: number;
  /** modelled seconds per local step this round (the wall clock sleeps it, the virtual clock adds it) */
  stepSeconds: number;
}

export function roundParticipants(plan: RunPlan, round: number): Uint32Array {
  return participantsFor(
    plan.scenario.method.participation,
    plan.clientCount,
    plan.scenario.seed,
    round,
  );
}

/** True for the exchange where clients spend their local steps (a method's last). */
export function isLocalWorkExchange(exchanges: readonly string[], exchange: string): boolean {
  return exchanges[exchanges.length - 1] === exchange;
}

export function assignmentsFor(
  plan: RunPlan,
  speed: SpeedModel,
  round: number,
  exchanges: readonly string[],
  exchange: string,
  participants: ArrayLike<number>,
): ClientAssignment[] {
  const localWork = isLocalWorkExchange(exchanges, exchange);
  const out: ClientAssignment[] = [];
  for (let j = 0; j < participants.length; j++) {
    const clientId = participants[j];
    const stepSeconds = stepSecondsFor(speed, clientId, round);
    const localSteps = localWork
      ? stepsUnderPolicy(plan.scenario.timing.policy, stepSeconds, plan.plannedSteps[clientId])
      : 1;
    const eta = plan.methodConfig.stepSize;
    const stepSize = plan.scenario.method.stepPolicy === 'inverse-steps' ? eta / localSteps : eta;
    out.push({ clientId, localSteps, stepSize, stepSeconds });
  }
  return out;
}
