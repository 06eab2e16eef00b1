// The in-process engine: the same rounds as the distributed runtime, with every client in this
// process and time taken from the models (virtual clock). It calls the very functions the
// coordinator and workers call (ServerRuntime, ClientRuntime, the round schedule and policy).

import { performance } from 'node:perf_hooks';
import type { Scenario } from '../scenario/schema.js';
import { theoryOf, type PlanTheory } from '../theory/plan-theory.js';
import { payloadBytes } from '../compress/payload-bytes.js';
import { speedModelFor } from '../timing/round-speed.js';
import { decideRound, type RoundParticipant } from '../timing/round-policy.js';
import { VirtualClock } from '../timing/virtual-clock.js';
import { ClientRuntime, type EncodedFields } from './client-runtime.js';
import { ServerRuntime, type EncodedUpload } from './server-runtime.js';
import { resolveRunPlan, type RunPlan } from './run-plan.js';
import { assignmentsFor, isLocalWorkExchange, roundParticipants } from './round-schedule.js';
import { evaluateModel } from './evaluate.js';
import type { ClientRoundRecord, RoundRecord } from './round-record.js';
import type { RunOutcome } from './run-summary.js';

export interface EngineOptions {
  /** called after every round, e.g. for a live progress line */
  onRound?: (record: RoundRecord) => void;
  /** the server's starting model x_0 (default zero) */
  initialModel?: Float64Array;
}

/** Round 0 of `rounds` is the initial model; then one record per round run. */
export type EngineResult = RunOutcome;

export function encodedPayloadBytes(fields: EncodedFields): number {
  let total = 0;
  for (const cv of Object.values(fields)) total += payloadBytes(cv);
  return total;
}

export function planFor(scenario: Scenario): { plan: RunPlan; theory: PlanTheory } {
  const theory = theoryOf(scenario);
  const plan = resolveRunPlan(scenario, { dim: theory.instance.dim, weights: theory.instance.weights, smoothness: theory.constants.smoothness });
  return { plan, theory };
}

/** Runs a scenario to its target or its round limit, entirely in this process. */
export function runInProcess(scenario: Scenario, options: EngineOptions = {}): EngineResult {
  const started = performance.now();
  const { plan, theory } = planFor(scenario);
  const server = new ServerRuntime(plan, options.initialModel);
  const clients = theory.instance.objectives.map((objective, id) => new ClientRuntime(plan, id, objective));
  const speed = speedModelFor(scenario.timing, plan.clientCount, scenario.seed);
  const clock = new VirtualClock();
  const exchanges = server.method.exchanges;
  const evaluate = (x: Float64Array) => evaluateModel(theory.instance.global, theory.optimum.x, theory.optimum.loss, x);
  const wallNow = () => (performance.now() - started) / 1000;

  const initial = evaluate(server.model());
  const rounds: RoundRecord[] = [
    { round: 0, suboptimality: initial.suboptimality, distance: initial.distance, bytes: { payload: { up: 0, down: 0 } }, localSteps: {}, dropped: [], roundSeconds: 0, virtualSeconds: 0, wallSeconds: wallNow() },
  ];
  const clientRecords: ClientRoundRecord[] = [];
  let stopReason: EngineResult['stopReason'] = 'rounds-complete';
  const { rounds: roundsMax, evalEvery, target } = scenario.run;

  for (let round = 1; round <= roundsMax; round++) {
    const participants = roundParticipants(plan, round);
    let up = 0;
    let down = 0;
    let roundSeconds = 0;
    const localSteps: Record<string, number> = {};
    const dropped = new Set<number>();
    for (const exchange of exchanges) {
      const broadcast = server.broadcast(exchange);
      const assignments = assignmentsFor(plan, speed, round, exchanges, exchange, participants);
      const uploads: EncodedUpload[] = [];
      const timingInputs: RoundParticipant[] = [];
      for (const a of assignments) {
        const encodedDown = server.encodeDown(a.clientId, round, exchange, broadcast);
        const result = clients[a.clientId].work(round, exchange, encodedDown, a.localSteps, a.stepSize);
        const downBytes = encodedPayloadBytes(encodedDown);
        const upBytes = encodedPayloadBytes(result.encodedUp);
        down += downBytes;
        up += upBytes;
        uploads.push({ clientId: a.clientId, stepsTaken: result.stepsTaken, stepSize: a.stepSize, encodedUp: result.encodedUp });
        timingInputs.push({ clientId: a.clientId, stepSeconds: a.stepSeconds, plannedSteps: a.localSteps, stepsTaken: result.stepsTaken, downBytes, upBytes });
      }
      const timing = decideRound(scenario.timing.policy, scenario.timing.links, timingInputs);
      roundSeconds += timing.roundSeconds;
      const counted = uploads.filter((_, j) => !timing.participants[j].dropped);
      timing.participants.forEach((t, j) => {
        if (t.dropped) dropped.add(t.clientId);
        if (isLocalWorkExchange(exchanges, exchange)) localSteps[String(t.clientId)] = t.localSteps;
        clientRecords.push({
          round,
          exchange,
          clientId: t.clientId,
          localSteps: t.localSteps,
          computeSeconds: t.computeSeconds,
          waitSeconds: t.waitSeconds,
          transferSeconds: t.downSeconds + t.upSeconds,
          bytes: { payload: { up: timingInputs[j].upBytes, down: timingInputs[j].downBytes } },
          dropped: t.dropped,
        });
      });
      try {
        server.aggregate(exchange, counted);
      } catch (error) {
        if ((error as { code?: string }).code === 'E_NOT_FINITE') {
          stopReason = 'diverged';
          break;
        }
        throw error;
      }
    }
    const virtualSeconds = clock.advance(roundSeconds);
    const last = round === roundsMax || stopReason === 'diverged';
    const evaluated = round % evalEvery === 0 || last ? evaluate(server.model()) : null;
    const record: RoundRecord = {
      round,
      suboptimality: evaluated ? evaluated.suboptimality : null,
      distance: evaluated ? evaluated.distance : null,
      bytes: { payload: { up, down } },
      localSteps,
      dropped: [...dropped].sort((a, b) => a - b),
      roundSeconds,
      virtualSeconds,
      wallSeconds: wallNow(),
    };
    rounds.push(record);
    options.onRound?.(record);
    if (stopReason === 'diverged') break;
    if (evaluated && target > 0 && evaluated.suboptimality <= target) {
      stopReason = 'target-reached';
      break;
    }
  }
  return { plan, theory, rounds, clients: clientRecords, finalModel: server.model(), stopReason, wallSeconds: wallNow() };
}
