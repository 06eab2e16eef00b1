// The run the theory predicts, round by round, beside the one measured: the ideal round map
// (round-map.ts: no compression, no drops, the plan's tau_i and step sizes, direct calls) iterated
// from the run's own initial model, and f - f* of its model after each round. Where the run
// injects nothing the two are the same arithmetic and agree to rounding; the gap between them is
// what compression, stragglers and drops cost. The ideal run needs no affine map: logistic and
// softmax runs have one too. Where a round is random (minibatches, partial participation) or its
// tau_i change from round to round there is no single ideal run, and every value is null.

import type { Objective } from '../problem/objective.js';
import { evaluateModel } from './evaluate.js';
import { buildRoundMap, type PlanRoundMap } from './round-map.js';
import type { RunPlan } from './run-plan.js';

/** The oracle's solution the trajectory is measured against. */
export interface TrajectoryOptimum {
  x: Float64Array;
  loss: number;
}

/** Why a plan has no single ideal run, or null. */
export function trajectoryBlocker(plan: RunPlan): string | null {
  const s = plan.scenario;
  if (s.method.gradient !== 'full') return 'minibatch gradients make every round random';
  if (s.method.participation < 1) return 'partial participation makes every round random';
  if (
    s.timing.policy.kind === 'deadline' &&
    (s.timing.jitter > 0 || s.timing.transient.probability > 0)
  )
    return 'a deadline with jitter changes tau_i every round';
  return null;
}

/** The plan the ideal run follows: round-map.ts drops compression; here no update is dropped either. */
function noDropsPlan(plan: RunPlan): RunPlan {
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
  private roundMap: PlanRoundMap | null = null;
  /** the state after round `stateRound` (1 after the map's own first round) */
  private state: Float64Array | null = null;
  private stateRound = 0;
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
    this.blocker = trajectoryBlocker(plan);
  }

  /**
   * Predicted f - f* after `round` rounds (round 0: the initial model), or null where there is no
   * trajectory or the ideal run is no longer finite. Rounds asked in increasing order cost one
   * round-map application each; an earlier round replays from the start.
   */
  at(round: number): number | null {
    if (this.blocker !== null) return null;
    if (round === 0) return this.suboptimalityOf(this.initialModel);
    if (this.state === null || this.stateRound > round) {
      this.roundMap ??= buildRoundMap(noDropsPlan(this.plan), this.objectives, this.initialModel);
      this.state = this.roundMap.start;
      this.stateRound = 1;
      this.diverged = false;
    }
    const roundMap = this.roundMap!;
    while (this.stateRound < round && !this.diverged) {
      this.state = roundMap.map(this.state);
      this.stateRound++;
      if (!this.state.every(Number.isFinite)) this.diverged = true;
    }
    if (this.diverged) return null;
    return this.suboptimalityOf(roundMap.modelOf(this.state));
  }

  private suboptimalityOf(model: Float64Array): number | null {
    const { suboptimality } = evaluateModel(this.global, this.optimum.x, this.optimum.loss, model);
    return Number.isFinite(suboptimality) ? suboptimality : null;
  }
}
