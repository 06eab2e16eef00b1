// What the round walk (round-walk.ts) asks of the thing that carries its messages, and the two
// drivers that answer it. The walk is a generator: it yields a request whenever it needs the
// outside world (who is still in the run, the ups of an exchange, an evaluation) and resumes with
// the answer. driveSync answers at once (direct calls: the in-process engine, the round map);
// driveAsync awaits each answer (the coordinator's WebSocket sessions). Everything else, from
// budgets to records, happens inside the walk, once, for every transport.

import type { ExplosionBound } from './explosion-bound.js';
import type { ByteCounts, ClientRoundRecord } from './round-record.js';
import type { ClientAssignment } from './round-schedule.js';
import type { EncodedFields } from './client-runtime.js';
import type { RoundEvaluation } from './evaluate.js';
import type { StopReason } from './run-summary.js';
import type { VirtualClockState } from '../timing/virtual-clock.js';

/** Byte layers beyond the payload that a transport counts (a network's codec and socket). */
export type ByteLayer = 'encoded' | 'wire';

/** One client's down in an exchange, encoded against its own replicas. */
export interface ExchangeDown {
  assignment: ClientAssignment;
  encodedDown: EncodedFields;
  /** payload bytes of encodedDown */
  payloadBytes: number;
}

/** The downs of one exchange, in ascending client id. */
export interface ExchangeOrder {
  round: number;
  exchange: string;
  downs: readonly ExchangeDown[];
}

/** Seconds a client's up reports from a real clock, replacing the models' (wall clock). */
export interface MeasuredSeconds {
  computeSeconds: number;
  transferSeconds: number;
  waitSeconds: number;
  /** seconds the frame carrying the up took to arrive at the server's socket, first byte to last */
  upStreamSeconds: number;
}

/** Bytes of one client's down and up at the transport's own layers. */
export type LayerBytes = Partial<Record<ByteLayer, ByteCounts>>;

/**
 * What came back from one client: its up; word that its update was not finite (its work met a
 * NaN or an infinity, so there is nothing to encode: the walk stops the run as diverged); or
 * nothing (lost, late, silent).
 */
export type ClientReturn =
  | {
      kind: 'up';
      encodedUp: EncodedFields;
      stepsTaken: number;
      layers?: LayerBytes;
      measured?: MeasuredSeconds;
    }
  | { kind: 'not-finite'; layers?: LayerBytes }
  | { kind: 'missing'; layers?: LayerBytes };

export interface ExchangeReply {
  /** by client id; a down with no entry counts as missing */
  returns: ReadonlyMap<number, ClientReturn>;
  /** called with the exchange's records once settled (a late up may still fill in its bytes) */
  recorded?: (records: readonly ClientRoundRecord[]) => void;
}

export type ExchangeRequest =
  | { kind: 'members'; round: number; exchange: string; candidates: readonly number[] }
  | { kind: 'exchange'; order: ExchangeOrder };

/**
 * Where a walk stands between two rounds: with the runtimes' states, all a run needs to go on
 * from there (a checkpoint), and what a resumed walk starts from.
 */
export interface WalkPoint {
  /** the last round walked (its record written); a resumed walk goes on with round + 1 */
  round: number;
  clock: VirtualClockState;
  /** wall-clock seconds of the run so far (its last record's), which a resumed run counts on from */
  wallSeconds: number;
  /** the run's explosion bound, from x_0 and its evaluation (explosion-bound.ts) */
  bound: ExplosionBound;
}

/**
 * The evaluation of a round started and left running while the walk goes on ('evaluate-begin',
 * answered at once), and its answer when the walk needs it ('evaluate-end'): the transport's
 * evaluate either way, which the drivers call at the begin and whose answer they keep.
 */
export type EvaluationRequest =
  | { kind: 'evaluate-begin'; model: Float64Array; round: number }
  | { kind: 'evaluate-end'; round: number };

export type WalkRequest =
  | ExchangeRequest
  | EvaluationRequest
  | { kind: 'open-round'; round: number }
  | { kind: 'close-round'; round: number }
  | { kind: 'evaluate'; model: Float64Array; round: number }
  | { kind: 'checkpoint'; point: WalkPoint };

/** What a request of each kind is answered with. */
export interface WalkAnswers {
  members: readonly number[];
  exchange: ExchangeReply;
  'open-round': StopReason | null;
  'close-round': StopReason | null;
  evaluate: RoundEvaluation;
  'evaluate-begin': void;
  'evaluate-end': RoundEvaluation;
  checkpoint: void;
}

type Answer<T, Mode extends 'sync' | 'async'> = Mode extends 'sync' ? T : T | Promise<T>;

/** Carries one round's exchanges: enough to walk a round (the round map needs no more). */
export interface ExchangeTransport<Mode extends 'sync' | 'async' = 'sync'> {
  /** the candidates (ascending) that are still in the run; a client that left takes no part */
  members(
    round: number,
    exchange: string,
    candidates: readonly number[],
  ): Answer<readonly number[], Mode>;
  /** delivers the downs to their clients and returns what came back */
  exchange(order: ExchangeOrder): Answer<ExchangeReply, Mode>;
}

/** Carries a whole run. */
export interface RoundTransport<
  Mode extends 'sync' | 'async' = 'sync',
> extends ExchangeTransport<Mode> {
  /** before a round starts: null to go on, or why the run stops first */
  openRound(round: number): Answer<StopReason | null, Mode>;
  /** after a round's exchanges: null to go on, or why this round is the last */
  closeRound(round: number): Answer<StopReason | null, Mode>;
  /** the oracle's view of the model after `round` rounds, and the predicted trajectory's there */
  evaluate(model: Float64Array, round: number): Answer<RoundEvaluation, Mode>;
  /** keeps everything the run needs to go on after `point.round` (a checkpoint) */
  checkpoint(point: WalkPoint): Answer<void, Mode>;
}

/** One request, typed by its answer: the walk writes `yield* ask(request)`. */
export function* ask<R extends WalkRequest>(
  request: R,
): Generator<R, WalkAnswers[R['kind']], unknown> {
  return (yield request) as WalkAnswers[R['kind']];
}

/** A transport of either mode as the drivers see it: each method gives its answer or a promise of it. */
type Answering = {
  [K in keyof RoundTransport]: (...args: Parameters<RoundTransport[K]>) => unknown;
};

/**
 * Evaluations begun and not yet ended, by round: the answer (or its promise) the transport gave
 * at the begin. A promise that fails is held as it is and fails the walk at its end, never as an
 * unhandled rejection in between.
 */
class EvaluationsBegun {
  private readonly begun = new Map<number, unknown>();

  begin(transport: Answering, model: Float64Array, round: number): void {
    const answer = transport.evaluate(model, round);
    if (answer instanceof Promise) answer.catch(() => undefined);
    this.begun.set(round, answer);
  }

  end(round: number): unknown {
    if (!this.begun.has(round))
      throw new Error(`the walk ended the evaluation of round ${round}, which it never began`);
    const answer = this.begun.get(round);
    this.begun.delete(round);
    return answer;
  }
}

function answer(transport: Answering, request: WalkRequest, begun: EvaluationsBegun): unknown {
  switch (request.kind) {
    case 'evaluate-begin':
      return begun.begin(transport, request.model, request.round);
    case 'evaluate-end':
      return begun.end(request.round);
    case 'members':
      return transport.members(request.round, request.exchange, request.candidates);
    case 'exchange':
      return transport.exchange(request.order);
    case 'open-round':
      return transport.openRound(request.round);
    case 'close-round':
      return transport.closeRound(request.round);
    case 'evaluate':
      return transport.evaluate(request.model, request.round);
    case 'checkpoint':
      return transport.checkpoint(request.point);
  }
}

/** Walks to the end, answering every request at once. */
export function driveSync<T>(
  walk: Generator<ExchangeRequest, T, unknown>,
  transport: ExchangeTransport,
): T;
export function driveSync<T>(
  walk: Generator<WalkRequest, T, unknown>,
  transport: RoundTransport,
): T;
export function driveSync<T>(
  walk: Generator<WalkRequest, T, unknown>,
  transport: ExchangeTransport | RoundTransport,
): T {
  // The overloads pair a walk with a transport that answers every request it can yield.
  const answering = transport as Answering;
  const begun = new EvaluationsBegun();
  let step = walk.next();
  while (step.done !== true) step = walk.next(answer(answering, step.value, begun));
  return step.value;
}

/** Walks to the end, awaiting every answer. */
export async function driveAsync<T>(
  walk: Generator<WalkRequest, T, unknown>,
  transport: RoundTransport<'async'>,
): Promise<T> {
  const begun = new EvaluationsBegun();
  let step = walk.next();
  while (step.done !== true) step = walk.next(await answer(transport, step.value, begun));
  return step.value;
}
