// The round walk: the one definition of what a round is, for every runtime. Per round: the
// participants (round-schedule.ts); per exchange: who is still in the run, tau_i and eta_i under
// the round and step policies, one down per client encoded against its own replicas, the ups
// (from the transport), timing and drops (settle-exchange.ts), aggregation in ascending client
// id; then the round's record and evaluation. A non-finite value anywhere (the model, a
// client's update, the aggregate), or a finite one past the run's explosion bound (a model or an
// upload, every round; f - f* where evaluated; explosion-bound.ts), stops the run with reason
// "diverged" at the end of the round where it appeared.
//
// The walk is a generator over requests (walk-transport.ts): the in-process engine and the
// round map answer them with direct calls, the coordinator with its WebSocket sessions. Given
// the same answers, every runtime takes the same steps in the same order, which is why a
// virtual-clock run ends on the same model bit for bit in both.

import { fieldsPayloadBytes } from '../compress/payload-bytes.js';
import { isNonFiniteError } from '../base/coded-error.js';
import { speedModelFor, type SpeedModel } from '../timing/round-speed.js';
import { VirtualClock } from '../timing/virtual-clock.js';
import { allFinite } from '../vec/kernels.js';
import {
  explosionBound,
  normWithin,
  suboptimalityWithin,
  type ExplosionBound,
} from './explosion-bound.js';
import type { RoundEvaluation } from './evaluate.js';
import type { ClientRoundRecord, RoundRecord } from './round-record.js';
import {
  assignmentsFor,
  isLocalWorkExchange,
  roundParticipants,
  type ClientAssignment,
} from './round-schedule.js';
import type { RunPlan } from './run-plan.js';
import type { RunOutcome, StopReason } from './run-summary.js';
import type { EncodedUpload, ServerRuntime } from './server-runtime.js';
import { settleExchange } from './settle-exchange.js';
import {
  ask,
  type ByteLayer,
  type ExchangeDown,
  type ExchangeReply,
  type ExchangeRequest,
  type WalkPoint,
  type WalkRequest,
} from './walk-transport.js';

/** What every round of a walk shares. */
export interface WalkSetup {
  plan: RunPlan;
  server: ServerRuntime;
  speed: SpeedModel;
  /** byte layers beyond the payload that the transport counts */
  byteLayers: readonly ByteLayer[];
}

export function walkSetup(
  plan: RunPlan,
  server: ServerRuntime,
  byteLayers: readonly ByteLayer[] = [],
): WalkSetup {
  return {
    plan,
    server,
    speed: speedModelFor(plan.scenario.timing, plan.clientCount, plan.scenario.seed),
    byteLayers,
  };
}

/** One round walked. */
export interface WalkedRound {
  /** every client sent a down, exchange by exchange */
  records: ClientRoundRecord[];
  /** tau_i of the local-work exchange, by client id */
  localSteps: Record<string, number>;
  /** ascending: clients whose update did not count in some exchange */
  dropped: number[];
  roundSeconds: number;
  diverged: boolean;
  /** the `goOn` of walkRound said no: nothing of the round counts */
  abandoned: boolean;
}

/** The downs of one exchange, or null when the server's state is no longer finite. */
function encodeDowns(
  server: ServerRuntime,
  round: number,
  exchange: string,
  assignments: readonly ClientAssignment[],
): ExchangeDown[] | null {
  try {
    const broadcast = server.broadcast(exchange);
    return assignments.map((assignment) => {
      const encodedDown = server.encodeDown(assignment.clientId, round, exchange, broadcast);
      return { assignment, encodedDown, payloadBytes: fieldsPayloadBytes(encodedDown) };
    });
  } catch (error) {
    if (isNonFiniteError(error)) return null;
    throw error;
  }
}

/**
 * False when a client's update came back not finite, or (given a bound) an up that came back
 * holds a vector past it, counted or not: either way that client diverged. A transport decides
 * nothing here (a worker's word is data, judged as the engine's own clients are), which keeps
 * every runtime's walk the same.
 */
function updatesWithin(reply: ExchangeReply, bound: ExplosionBound | null): boolean {
  for (const returned of reply.returns.values()) {
    if (returned.kind === 'not-finite') return false;
    if (returned.kind !== 'up' || bound === null) continue;
    for (const vector of Object.values(returned.encodedUp))
      if (!normWithin(vector.values, bound)) return false;
  }
  return true;
}

/** Folds the uploads in; false when that meets or makes a non-finite value, or a model past the bound. */
function aggregateWithin(
  server: ServerRuntime,
  exchange: string,
  uploads: readonly EncodedUpload[],
  bound: ExplosionBound | null,
): boolean {
  try {
    server.aggregate(exchange, uploads);
  } catch (error) {
    if (isNonFiniteError(error)) return false;
    throw error;
  }
  const model = server.model();
  return bound === null ? allFinite(model) : normWithin(model, bound);
}

/**
 * Walks one round's exchanges. Without a bound (the round map, the field-shape probe) only a
 * non-finite value counts as diverged.
 *
 * `goOn`, when given, is asked once, before the round changes anything it cannot take back
 * (after its first exchange came back, before that exchange is settled and folded in; or at
 * the end of a round that folded nothing): false abandons the round, as if it had never been
 * walked beyond the downs it sent. The run walk passes the end of the previous round's
 * evaluation there, which then overlaps this round's first exchange.
 */
export function* walkRound<Extra extends WalkRequest = never>(
  setup: WalkSetup,
  round: number,
  bound: ExplosionBound | null = null,
  goOn?: () => Generator<Extra, boolean, unknown>,
): Generator<ExchangeRequest | Extra, WalkedRound, unknown> {
  const { plan, server, speed } = setup;
  const exchanges = server.method.exchanges;
  const out: WalkedRound = {
    records: [],
    localSteps: {},
    dropped: [],
    roundSeconds: 0,
    diverged: false,
    abandoned: false,
  };
  let asked = goOn === undefined;
  const dropped = new Set<number>();
  // A client whose up did not come back in one exchange (lost, late) sits out the rest of the round.
  const sittingOut = new Set<number>();
  for (const exchange of exchanges) {
    const candidates = Array.from(roundParticipants(plan, round)).filter(
      (id) => !sittingOut.has(id),
    );
    const members =
      candidates.length === 0 ? [] : yield* ask({ kind: 'members', round, exchange, candidates });
    if (members.length === 0) break;
    const downs = encodeDowns(
      server,
      round,
      exchange,
      assignmentsFor(plan, speed, round, exchanges, exchange, members),
    );
    if (downs === null) {
      out.diverged = true;
      break;
    }
    const order = { round, exchange, downs };
    const reply = yield* ask({ kind: 'exchange', order });
    if (!asked) {
      asked = true;
      if (!(yield* goOn!())) {
        out.abandoned = true;
        return out;
      }
    }
    const settled = settleExchange(
      plan,
      order,
      exchanges.indexOf(exchange),
      reply,
      setup.byteLayers,
    );
    reply.recorded?.(settled.records);
    const localWork = isLocalWorkExchange(exchanges, exchange);
    for (const r of settled.records) {
      if (r.dropped) dropped.add(r.clientId);
      if (localWork) out.localSteps[String(r.clientId)] = r.localSteps;
    }
    for (const id of settled.missing) sittingOut.add(id);
    out.records.push(...settled.records);
    out.roundSeconds += settled.roundSeconds;
    // A diverged update is never folded in: the model stays the last one within bounds.
    if (
      !updatesWithin(reply, bound) ||
      !aggregateWithin(server, exchange, settled.uploads, bound)
    ) {
      out.diverged = true;
      break;
    }
  }
  if (!asked && !(yield* goOn!())) out.abandoned = true;
  out.dropped = [...dropped].sort((a, b) => a - b);
  return out;
}

/** What a run needs beyond one round. */
export interface RunWalkSetup extends WalkSetup {
  /** wall-clock seconds since the run began */
  wallSeconds: () => number;
  /** every round with its clients' records, round 0 (the initial evaluation, no clients) first */
  onRound?: (record: RoundRecord, clients: readonly ClientRoundRecord[]) => void;
  /**
   * Go on after this point (a checkpoint's), the runtimes already restored to it: round 0's
   * evaluation and record are not repeated, and the virtual clock counts on from the point's.
   */
  resumeAfter?: WalkPoint;
  /**
   * Ask the transport for a checkpoint after every this many rounds (0 or absent: never), and
   * always after the round a stop ('stopped') ended, so that an interrupted run can go on.
   */
  checkpointEveryRounds?: number;
  /**
   * Let a round's evaluation run on while the next round's first exchange goes out (see
   * `pending` in walkRun): for a transport whose evaluation runs elsewhere (the coordinator's
   * oracle thread). Either way the records, the final model and the clock are the same.
   */
  overlapEvaluation?: boolean;
}

/**
 * A run's end as the walk knows it. Its records went to onRound as they happened (round 0, the
 * initial model, then one per round walked); the walk keeps none, so its memory does not grow
 * with the rounds.
 */
export type WalkedRun = Pick<RunOutcome, 'finalModel' | 'stopReason'> & {
  virtualSeconds: number;
};

function bytesOf(
  records: readonly ClientRoundRecord[],
  byteLayers: readonly ByteLayer[],
): RoundRecord['bytes'] {
  const bytes: RoundRecord['bytes'] = { payload: { up: 0, down: 0 } };
  for (const layer of byteLayers) bytes[layer] = { up: 0, down: 0 };
  for (const r of records) {
    for (const layer of ['payload', ...byteLayers] as const) {
      bytes[layer]!.up += r.bytes[layer]?.up ?? 0;
      bytes[layer]!.down += r.bytes[layer]?.down ?? 0;
    }
  }
  return bytes;
}

/**
 * The record's heldOut field, where there is one: absent when nothing is held out, so that the
 * records of such runs stay as they were. A non-finite loss (a diverged model) is written as null.
 */
function heldOutOf(evaluation: RoundEvaluation): Pick<RoundRecord, 'heldOut'> {
  const heldOut = evaluation.heldOut;
  if (heldOut === null) return {};
  return {
    heldOut: { ...heldOut, loss: Number.isFinite(heldOut.loss) ? heldOut.loss : null },
  };
}

/** Walks a run to its target, its round limit, divergence, or the stop its transport calls. */
export function* walkRun(setup: RunWalkSetup): Generator<WalkRequest, WalkedRun, unknown> {
  const { server, byteLayers } = setup;
  const { rounds: roundsMax, evalEvery, target } = setup.plan.scenario.run;
  const start = setup.resumeAfter;
  const clock = start === undefined ? new VirtualClock() : VirtualClock.fromState(start.clock);
  let point: WalkPoint | undefined = start;
  // A resumed walk keeps the bound of the run it resumes: x_0 and its evaluation are behind it.
  let bound: ExplosionBound;
  if (start === undefined) {
    const initialModel = server.model();
    const initial = yield* ask({ kind: 'evaluate', model: initialModel, round: 0 });
    bound = explosionBound(initialModel, initial);
    const first: RoundRecord = {
      round: 0,
      suboptimality: initial.suboptimality,
      distance: initial.distance,
      predictedSuboptimality: initial.predictedSuboptimality,
      ...heldOutOf(initial),
      bytes: bytesOf([], byteLayers),
      localSteps: {},
      dropped: [],
      roundSeconds: 0,
      virtualSeconds: 0,
      wallSeconds: setup.wallSeconds(),
    };
    setup.onRound?.(first, []);
    point = { round: 0, clock: clock.state(), wallSeconds: first.wallSeconds, bound };
  } else {
    bound = start.bound;
  }
  const checkpointEvery = setup.checkpointEveryRounds ?? 0;
  let stopReason: StopReason = 'rounds-complete';

  /** The record of a walked round, with its evaluation where it had one; point moves to it. */
  const recordRound = (
    round: number,
    walked: WalkedRound,
    evaluated: RoundEvaluation | null,
    at: { virtualSeconds: number; clock: WalkPoint['clock']; wallSeconds: number },
  ): void => {
    const record: RoundRecord = {
      round,
      suboptimality: evaluated ? evaluated.suboptimality : null,
      distance: evaluated ? evaluated.distance : null,
      predictedSuboptimality: evaluated ? evaluated.predictedSuboptimality : null,
      ...(evaluated ? heldOutOf(evaluated) : {}),
      bytes: bytesOf(walked.records, byteLayers),
      localSteps: walked.localSteps,
      dropped: walked.dropped,
      roundSeconds: walked.roundSeconds,
      virtualSeconds: at.virtualSeconds,
      wallSeconds: at.wallSeconds,
    };
    setup.onRound?.(record, walked.records);
    point = { round, clock: at.clock, wallSeconds: at.wallSeconds, bound };
  };

  // A round whose evaluation runs on (on the oracle's thread) while the next round's downs go
  // out and its clients work: the evaluation no longer holds the run up between two rounds.
  // Only a round after which the run would go on anyway is left pending (not the last, nothing
  // ending it, no checkpoint due), and only the evaluation can still end the run there (the
  // target reached, or f - f* past the bound): the next round then asks for its end before it
  // settles or folds in anything (walkRound's goOn), and is abandoned if the run stops. So
  // every record, the final model and the clock are those of a walk that waited, which is why
  // both runtimes still agree bit for bit; what a stop costs is the next round's downs and work,
  // thrown away.
  let pending: {
    round: number;
    walked: WalkedRound;
    at: { virtualSeconds: number; clock: WalkPoint['clock']; wallSeconds: number };
  } | null = null;
  const endPending = function* (): Generator<WalkRequest, StopReason | null, unknown> {
    const { round, walked, at } = pending!;
    pending = null;
    const evaluated = yield* ask({ kind: 'evaluate-end', round });
    recordRound(round, walked, evaluated, at);
    if (!suboptimalityWithin(evaluated.suboptimality, bound)) return 'diverged';
    if (target > 0 && evaluated.suboptimality <= target) return 'target-reached';
    return null;
  };

  for (let round = (start?.round ?? 0) + 1; round <= roundsMax; round++) {
    const refused = yield* ask({ kind: 'open-round', round });
    if (refused !== null) {
      const ended = pending === null ? null : yield* endPending();
      stopReason = ended ?? refused;
      if (ended === null && refused === 'stopped')
        yield* ask({ kind: 'checkpoint', point: point! });
      break;
    }
    const verdict: { ending: StopReason | null } = { ending: null };
    const goOn: (() => Generator<WalkRequest, boolean, unknown>) | undefined =
      pending === null
        ? undefined
        : function* (): Generator<WalkRequest, boolean, unknown> {
            verdict.ending = yield* endPending();
            return verdict.ending === null;
          };
    const walked: WalkedRound = yield* walkRound(setup, round, bound, goOn);
    if (walked.abandoned) {
      stopReason = verdict.ending!;
      break;
    }
    const virtualSeconds = clock.advance(walked.roundSeconds);
    let ending: StopReason | null = walked.diverged
      ? 'diverged'
      : yield* ask({ kind: 'close-round', round });
    // A stopped run may be resumed: its record must be the one an unstopped run writes.
    const last = round === roundsMax || (ending !== null && ending !== 'stopped');
    const evaluates = round % evalEvery === 0 || last;
    const checkpointDue = checkpointEvery > 0 && round % checkpointEvery === 0 && round < roundsMax;
    if (
      setup.overlapEvaluation === true &&
      evaluates &&
      !last &&
      ending === null &&
      !checkpointDue
    ) {
      yield* ask({ kind: 'evaluate-begin', model: server.model(), round });
      const at = { virtualSeconds, clock: clock.state(), wallSeconds: setup.wallSeconds() };
      pending = { round, walked, at };
      continue;
    }
    const evaluated = evaluates
      ? yield* ask({ kind: 'evaluate', model: server.model(), round })
      : null;
    if (evaluated && !suboptimalityWithin(evaluated.suboptimality, bound)) ending = 'diverged';
    recordRound(round, walked, evaluated, {
      virtualSeconds,
      clock: clock.state(),
      wallSeconds: setup.wallSeconds(),
    });
    if (ending !== null) {
      stopReason = ending;
      if (ending === 'stopped') yield* ask({ kind: 'checkpoint', point: point! });
      break;
    }
    if (evaluated && target > 0 && evaluated.suboptimality <= target) {
      stopReason = 'target-reached';
      break;
    }
    if (checkpointDue) yield* ask({ kind: 'checkpoint', point: point! });
  }
  // The last round is never left pending; a walk that ends otherwise has ended its pending one.
  if (pending !== null) throw new Error('the round walk ended with a round left pending');
  return { finalModel: server.model(), stopReason, virtualSeconds: clock.now() };
}
