// Round policies: how long a round lasts, how many local steps each participant takes and whose
// update counts. Times are seconds from the round's start: a participant receives the broadcast
// (down), computes tau_i steps, sends its update (up) and then idles until the round ends.
//
// - all: everyone takes its planned tau_i; the round ends when the last update arrives.
// - deadline(budgetSeconds, stepsMax): before the client starts (so eta/tau_i is known), it gets
//   tau_i = clamp(floor((budget - down - up) / stepSeconds), 1, stepsMax). The budget covers
//   compute plus transfer, the transfer priced at the byte sizes given here (the caller passes
//   the expected upload size when compression makes it vary). The planned tau_i is ignored. A
//   client too slow for even one step within the budget still takes one and still counts, so a
//   round may overrun its budget: every update counts under this policy.
// - fastest-k(k): everyone starts its planned tau_i; the k earliest finishes count (equal finish
//   times: lower client id first) and the round ends at the k-th finish. The rest are dropped:
//   their work was done and is discarded, so their compute counts as spent and they do not wait.
//
// One call covers one exchange; a method with two exchanges (FedLin) times each one on its own.

import type { Scenario } from '../scenario/schema.js';
import { TimingError, assertFiniteAtLeast, assertIntegerInRange } from './errors.js';
import { downlinkSecondsFor, uplinkSecondsFor, type ClientLink } from './links.js';

export type RoundPolicy = Scenario['timing']['policy'];

/** What the policy knows about one participant before the round starts. */
export interface RoundParticipant {
  readonly clientId: number;
  /** seconds per local step in this round (stepSecondsFor) */
  readonly stepSeconds: number;
  /** tau_i of the plan */
  readonly plannedSteps: number;
  /** steps the client actually took, when known (a method may stop early); else the policy decides */
  readonly stepsTaken?: number;
  /** bytes the server sends this client in this exchange */
  readonly downBytes: number;
  /** bytes this client sends back (after compression; expected, if it varies) */
  readonly upBytes: number;
  /** the client's own link */
  readonly link: ClientLink;
}

/** What happened to one participant in the round. */
export interface ParticipantTiming {
  readonly clientId: number;
  /** tau_i actually taken */
  readonly localSteps: number;
  readonly computeSeconds: number;
  readonly downSeconds: number;
  readonly upSeconds: number;
  /** when its update reached the server, from the round's start */
  readonly finishSeconds: number;
  /** idle time from its finish to the round's end; 0 when dropped */
  readonly waitSeconds: number;
  /** its update arrived too late to count (fastest-k only) */
  readonly dropped: boolean;
}

export interface RoundTiming {
  /** in the order given (ascending client id) */
  readonly participants: ParticipantTiming[];
  readonly roundSeconds: number;
}

/**
 * A budget that holds exactly n steps in decimal (0.3 s of 0.1 s steps) divides to just below n
 * in binary floating point; this relative slack counts it as n. The most it can grant is a step
 * that overruns the budget by a billionth of it, far below anything the models can resolve.
 */
const quotientSlack = 1e-9;

/**
 * tau_i for a client before it starts. Under a deadline the budget covers local compute only
 * (tau_i = max(1, floor(budget / step time)), capped at stepsMax), so that tau_i, and with it a
 * step size eta/tau_i, is known before any byte moves; transfer time adds to the round's length.
 * Other policies keep the plan's tau_i.
 */
export function stepsUnderPolicy(
  policy: RoundPolicy,
  stepSeconds: number,
  plannedSteps: number,
): number {
  if (policy.kind !== 'deadline') return plannedSteps;
  const fitting = Math.floor((policy.budgetSeconds / stepSeconds) * (1 + quotientSlack));
  return Math.min(policy.stepsMax, Math.max(1, fitting));
}

/**
 * Refuses a fastest-k whose k exceeds the clients that take part in a round, when the plan is
 * made, so that both runtimes refuse it alike before any work. `perRoundWhy` says where the
 * count comes from (participation of the clients).
 */
export function assertPolicyFitsRound(
  policy: RoundPolicy,
  participantsPerRound: number,
  perRoundWhy: string,
): void {
  if (policy.kind !== 'fastest-k' || policy.k <= participantsPerRound) return;
  throw new TimingError(
    'E_TIMING_POLICY_K',
    `timing.policy.k: fastest-k counts the first k updates of a round, but a round has ${participantsPerRound} participants (${perRoundWhy}); give k <= ${participantsPerRound}, got ${policy.k}`,
    'timing.policy.k',
  );
}

/**
 * The policy over the updates that came back. The plan holds k within a round's participants;
 * only clients lost mid-run (a distributed run's workers) leave fewer updates than k, and
 * fastest-k then counts every one left.
 */
export function policyForUpdates(policy: RoundPolicy, updates: number): RoundPolicy {
  return policy.kind === 'fastest-k' && policy.k > updates ? { ...policy, k: updates } : policy;
}

function checkParticipants(participants: readonly RoundParticipant[]): void {
  if (participants.length === 0)
    throw new TimingError('E_TIMING_ARGUMENT', 'a round needs at least one participant');
  let previousId = -1;
  for (const p of participants) {
    assertIntegerInRange('clientId', p.clientId, previousId + 1, 2 ** 32 - 1);
    previousId = p.clientId;
    if (!(p.stepSeconds > 0) || !Number.isFinite(p.stepSeconds)) {
      throw new TimingError(
        'E_TIMING_ARGUMENT',
        `client ${p.clientId}: stepSeconds must be positive and finite, got ${p.stepSeconds}`,
      );
    }
    assertIntegerInRange('plannedSteps', p.plannedSteps, 1, 2 ** 31 - 1);
  }
}

/** Decides tau_i, drops and times for one exchange of one round. Participants must be in ascending client id. */
export function decideRound(
  policy: RoundPolicy,
  participants: readonly RoundParticipant[],
): RoundTiming {
  checkParticipants(participants);
  const count = participants.length;
  const downSeconds = new Float64Array(count);
  const upSeconds = new Float64Array(count);
  const localSteps = new Int32Array(count);
  const finishSeconds = new Float64Array(count);
  for (let j = 0; j < count; j++) {
    const p = participants[j];
    downSeconds[j] = downlinkSecondsFor(p.link, p.downBytes);
    upSeconds[j] = uplinkSecondsFor(p.link, p.upBytes);
    localSteps[j] = p.stepsTaken ?? stepsUnderPolicy(policy, p.stepSeconds, p.plannedSteps);
    finishSeconds[j] = downSeconds[j] + localSteps[j] * p.stepSeconds + upSeconds[j];
  }

  const dropped = new Uint8Array(count);
  let roundSeconds = 0;
  if (policy.kind === 'fastest-k') {
    if (policy.k > count) {
      throw new TimingError(
        'E_TIMING_POLICY_K',
        `fastest-k needs k <= participants per round (${count}), got k = ${policy.k}`,
        'timing.policy.k',
      );
    }
    // Participants come in ascending id, so a stable sort by finish breaks ties to the lower id.
    const order = Array.from({ length: count }, (_, j) => j).sort(
      (a, b) => finishSeconds[a] - finishSeconds[b],
    );
    roundSeconds = finishSeconds[order[policy.k - 1]];
    for (let r = policy.k; r < count; r++) dropped[order[r]] = 1;
  } else {
    for (let j = 0; j < count; j++)
      if (finishSeconds[j] > roundSeconds) roundSeconds = finishSeconds[j];
  }
  assertFiniteAtLeast('roundSeconds', roundSeconds, 0);

  const timings: ParticipantTiming[] = new Array(count);
  for (let j = 0; j < count; j++) {
    timings[j] = {
      clientId: participants[j].clientId,
      localSteps: localSteps[j],
      computeSeconds: localSteps[j] * participants[j].stepSeconds,
      downSeconds: downSeconds[j],
      upSeconds: upSeconds[j],
      finishSeconds: finishSeconds[j],
      waitSeconds: dropped[j] === 1 ? 0 : roundSeconds - finishSeconds[j],
      dropped: dropped[j] === 1,
    };
  }
  return { participants: timings, roundSeconds };
}
