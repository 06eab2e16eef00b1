// The in-process engine: the round walk (round-walk.ts) with every client in this process,
// answered by direct calls, and time taken from the models (virtual clock). The coordinator
// walks the very same rounds over its WebSocket sessions.

import { performance } from 'node:perf_hooks';
import type { Scenario } from '../scenario/schema.js';
import { theoryOf, type PlanTheory } from '../theory/plan-theory.js';
import { ClientRuntime } from './client-runtime.js';
import { DirectTransport } from './direct-transport.js';
import { evaluateModel, type RoundEvaluation } from './evaluate.js';
import { HeldOutSet } from './held-out-evaluation.js';
import { objectiveSpecOf } from '../data/problem-instance.js';
import { PredictedTrajectory } from './predicted-trajectory.js';
import { walkRun, walkSetup, type RunWalkSetup } from './round-walk.js';
import type { RecordSink, RoundRecord } from './round-record.js';
import { assertPlannable, resolveRunPlan, type RunPlan } from './run-plan.js';
import { restoreRunState, type RunState } from './run-state.js';
import type { RunOutcome } from './run-summary.js';
import { ServerRuntime } from './server-runtime.js';
import { driveAsync, driveSync, type RoundTransport, type WalkPoint } from './walk-transport.js';

export interface EngineOptions {
  /** called after every round, e.g. for a live progress line */
  onRound?: (record: RoundRecord) => void;
  /**
   * Opens where the records go as they happen, once the plan is made (a scenario the plan
   * refuses opens nothing); without it the records are not kept.
   */
  openRecords?: () => RecordSink;
  /** the server's starting model x_0 (default zero) */
  initialModel?: Float64Array;
  /** go on from this state (a checkpoint's) instead of round 0 */
  resume?: RunState;
  /** hand the run's state to onCheckpoint after every this many rounds (0 or absent: never) */
  checkpointEveryRounds?: number;
  /** receives the run's state at each checkpoint, and when a stop ends the run */
  onCheckpoint?: (state: RunState) => void;
  /**
   * Walk as the coordinator does, each round's evaluation ended during the next round's first
   * exchange (RunWalkSetup.overlapEvaluation); here it changes only when records arrive.
   */
  overlapEvaluation?: boolean;
}

/** The run's end; its records went to the sink openRecords opened (after `resume`'s round when resuming). */
export type EngineResult = RunOutcome;

/** The plan and the oracle's theory of a scenario; refuses a scenario no runtime can run before the oracle works. */
export function planFor(scenario: Scenario): { plan: RunPlan; theory: PlanTheory } {
  assertPlannable(scenario);
  const theory = theoryOf(scenario);
  const plan = resolveRunPlan(scenario, {
    dim: theory.instance.dim,
    weights: theory.instance.weights,
    smoothness: theory.constants.smoothness,
  });
  return { plan, theory };
}

/** Direct calls, evaluated by the oracle here; the run stops early only when asked to. */
class InProcessTransport extends DirectTransport implements RoundTransport {
  private readonly run: InProcessRun;

  constructor(run: InProcessRun) {
    super(run.clients);
    this.run = run;
  }

  openRound(_round: number): 'stopped' | null {
    return this.run.stopRequested() ? 'stopped' : null;
  }

  closeRound(): 'stopped' | null {
    return this.run.stopRequested() ? 'stopped' : null;
  }

  evaluate(model: Float64Array, round: number): RoundEvaluation {
    const { theory } = this.run;
    return {
      ...evaluateModel(theory.instance.global, theory.optimum.x, theory.optimum.loss, model),
      predictedSuboptimality: this.run.predicted.at(round),
      heldOut: this.run.heldOut.evaluate(model),
    };
  }

  checkpoint(point: WalkPoint): void {
    this.run.onCheckpoint?.({
      ...point,
      planHash: this.run.plan.planHash,
      server: this.run.server.snapshot(),
      clients: this.run.clients.map((c) => c.snapshot()),
    });
  }
}

interface InProcessRun {
  plan: RunPlan;
  theory: PlanTheory;
  server: ServerRuntime;
  clients: ClientRuntime[];
  predicted: PredictedTrajectory;
  heldOut: HeldOutSet;
  stopRequested: () => boolean;
  onCheckpoint?: (state: RunState) => void;
}

function prepare(
  scenario: Scenario,
  options: EngineOptions,
  stopRequested: () => boolean,
): { run: InProcessRun; setup: RunWalkSetup; wallSeconds: () => number } {
  const started = performance.now();
  const wallOffset = options.resume?.wallSeconds ?? 0;
  const wallSeconds = () => wallOffset + (performance.now() - started) / 1000;
  const { plan, theory } = planFor(scenario);
  const server = new ServerRuntime(plan, options.initialModel);
  const clients = theory.instance.objectives.map(
    (objective, id) => new ClientRuntime(plan, id, objective),
  );
  if (options.resume !== undefined) restoreRunState(plan, options.resume, server, clients);
  const predicted = new PredictedTrajectory(
    plan,
    theory.instance.objectives,
    theory.instance.global,
    theory.optimum,
    options.initialModel,
  );
  const run = {
    plan,
    theory,
    server,
    clients,
    predicted,
    heldOut: new HeldOutSet(objectiveSpecOf(plan.scenario), theory.instance.testShards),
    stopRequested,
    onCheckpoint: options.onCheckpoint,
  };
  const { onRound } = options;
  const records = options.openRecords?.();
  const setup: RunWalkSetup = {
    ...walkSetup(plan, server),
    wallSeconds,
    onRound: (record, clientRecords) => {
      records?.append(record, clientRecords);
      onRound?.(record);
    },
    ...(options.resume === undefined ? {} : { resumeAfter: options.resume }),
    checkpointEveryRounds: options.checkpointEveryRounds ?? 0,
    overlapEvaluation: options.overlapEvaluation ?? false,
  };
  return { run, setup, wallSeconds };
}

function outcomeOf(
  run: InProcessRun,
  walked: ReturnType<typeof walkRun> extends Generator<unknown, infer R> ? R : never,
  wallSeconds: number,
): EngineResult {
  return {
    plan: run.plan,
    theory: run.theory,
    finalModel: walked.finalModel,
    stopReason: walked.stopReason,
    wallSeconds,
  };
}

/** Runs a scenario to its target or its round limit, entirely in this process. */
export function runInProcess(scenario: Scenario, options: EngineOptions = {}): EngineResult {
  const { run, setup, wallSeconds } = prepare(scenario, options, () => false);
  const walked = driveSync(walkRun(setup), new InProcessTransport(run));
  return outcomeOf(run, walked, wallSeconds());
}

/**
 * runInProcess that lets the event loop turn between rounds, so that a signal handler runs and
 * may ask the run to stop (`stopRequested`); a stopped run ends after the round in progress,
 * with a checkpoint (onCheckpoint) from which it can go on.
 */
export async function runInProcessStoppable(
  scenario: Scenario,
  options: EngineOptions,
  stopRequested: () => boolean,
): Promise<EngineResult> {
  const { run, setup, wallSeconds } = prepare(scenario, options, stopRequested);
  const direct = new InProcessTransport(run);
  const transport: RoundTransport<'async'> = {
    members: (round, exchange, candidates) => direct.members(round, exchange, candidates),
    exchange: (order) => direct.exchange(order),
    openRound: (round) =>
      new Promise((resolve) => setImmediate(() => resolve(direct.openRound(round)))),
    closeRound: () => direct.closeRound(),
    evaluate: (model, round) => direct.evaluate(model, round),
    checkpoint: (point) => direct.checkpoint(point),
  };
  const walked = await driveAsync(walkRun(setup), transport);
  return outcomeOf(run, walked, wallSeconds());
}
