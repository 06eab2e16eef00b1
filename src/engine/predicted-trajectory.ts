// The run the theory predicts, round by round, beside the one measured: the ideal run (the plan's
// ideal twin, ideal-plan.ts: no compression, every client in every round, and here no dropped
// update either; the plan's tau_i and step sizes) walked by direct calls from the run's own
// initial model, and f - f* of its model after each round. Where the run injects nothing the two
// are the same arithmetic and agree to rounding; the gap between them is what compression,
// stragglers and drops cost. The ideal run needs no affine map: logistic and softmax runs have
// one too. Where a round is random (minibatches, partial participation) or its tau_i change from
// round to round there is no single ideal run, and every value is null (random rounds get a
// Monte Carlo band instead, monte-carlo-band.ts).
//
// The ideal run keeps its own runtimes (each client's method state once more; the data is
// shared), so that a round costs one round of in-process work, with no state vector to flatten.

import type { Objective } from '../problem/objective.js';
import { ClientRuntime } from './client-runtime.js';
import { DirectTransport } from './direct-transport.js';
import { evaluateModel } from './evaluate.js';
import { idealPlan } from './ideal-plan.js';
import { walkRound, walkSetup, type WalkSetup } from './round-walk.js';
import type { RunPlan } from './run-plan.js';
import { ServerRuntime } from './server-runtime.js';
import { driveSync } from './walk-transport.js';
import { trajectoryBlocker } from './trajectory-blocker.js';

/** The oracle's solution the trajectory is measured against. */
export interface TrajectoryOptimum {
  x: Float64Array;
  loss: number;
}

/** The plan the ideal run follows: round-map.ts drops compression; here no update is dropped either. */
export function noDropsPlan(plan: RunPlan): RunPlan {
  if (plan.scenario.timing.policy.kind !== 'fastest-k') return plan;
  const timing = { ...plan.scenario.timing, policy: { kind: 'all' as const } };
  return { ...plan, scenario: { ...plan.scenario, timing } };
}

export class PredictedTrajectory {
  private readonly plan: RunPlan;
  private readonly objectives: readonly Objective[];
  private readonly global: Objective;
  private readonly optimum: TrajectoryOptimum;
  private readonly initialModel: Float64Array;
  /** why there is no trajectory, or null */
  readonly blocker: string | null;
  /** the ideal run, walked up to `walkedRound` */
  private ideal: { setup: WalkSetup; server: ServerRuntime; transport: DirectTransport } | null =
    null;
  private walkedRound = 0;
  /** set once the ideal run leaves the finite numbers: it stays there */
  private diverged = false;

  constructor(
    plan: RunPlan,
    objectives: readonly Objective[],
    global: Objective,
    optimum: TrajectoryOptimum,
    initialModel: Float64Array = new Float64Array(plan.dim),
  ) {
    this.plan = plan;
    this.objectives = objectives;
    this.global = global;
    this.optimum = optimum;
    this.initialModel = initialModel;
    this.blocker = trajectoryBlocker(plan.scenario, plan.dim);
  }

  /**
   * Predicted f - f* after `round` rounds (round 0: the initial model), or null where there is no
   * trajectory or the ideal run is no longer finite. Rounds asked in increasing order cost one
   * ideal round each; an earlier round replays from the start.
   */
  at(round: number): number | null {
    if (this.blocker !== null) return null;
    if (this.ideal === null || this.walkedRound > round) this.restart();
    const { setup, server, transport } = this.ideal!;
    while (this.walkedRound < round && !this.diverged) {
      const walked = driveSync(walkRound(setup, this.walkedRound + 1), transport);
      this.walkedRound++;
      // A non-finite update is never folded in: the ideal run stops being one.
      if (walked.diverged) this.diverged = true;
    }
    return this.diverged ? null : this.suboptimalityOf(server.model());
  }

  private restart(): void {
    const plan = idealPlan(noDropsPlan(this.plan));
    const server = new ServerRuntime(plan, this.initialModel);
    const clients = this.objectives.map((objective, id) => new ClientRuntime(plan, id, objective));
    this.ideal = {
      setup: walkSetup(plan, server),
      server,
      transport: new DirectTransport(clients),
    };
    this.walkedRound = 0;
    this.diverged = false;
  }

  private suboptimalityOf(model: Float64Array): number | null {
    const { suboptimality } = evaluateModel(this.global, this.optimum.x, this.optimum.loss, model);
    return Number.isFinite(suboptimality) ? suboptimality : null;
  }
}
