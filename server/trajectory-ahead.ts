// The predicted trajectory (src/engine/predicted-trajectory.ts) walked ahead of the rounds that
// ask for it. The ideal run depends on the plan alone, never on the measured run, so the oracle
// thread can walk the ideal rounds up to the next evaluated round while the workers compute
// those rounds, instead of after the coordinator asks: the two overlap on separate cores, and
// every value is the one the walk in order gives. Nothing past the next round the walk
// evaluates (run.evalEvery) is walked ahead, so an evaluation never waits behind a round it does
// not need, and a run that stops early wastes at most those rounds.

import type { PredictedTrajectory } from '../src/engine/predicted-trajectory.js';

/** The run's rounds and how often the walk evaluates (scenario.run). */
export interface EvaluatedRounds {
  rounds: number;
  evalEvery: number;
}

export class TrajectoryAhead {
  private readonly trajectory: PredictedTrajectory;
  private readonly run: EvaluatedRounds;
  /** the predicted f - f* after 0, 1, ... rounds, as walked so far */
  private readonly values: (number | null)[] = [];
  private lastAsked = 0;

  constructor(trajectory: PredictedTrajectory, run: EvaluatedRounds) {
    this.trajectory = trajectory;
    this.run = run;
  }

  /** Predicted f - f* after `round` rounds (PredictedTrajectory.at), walking up to it if needed. */
  at(round: number): number | null {
    this.lastAsked = round;
    // An earlier round than walked (a resumed run asks from its own round on) is kept already.
    while (this.values.length <= round) this.walkOne();
    return this.values[round];
  }

  /** The round the walk evaluates next: the next multiple of evalEvery, or the run's last. */
  nextAsked(): number {
    const { rounds, evalEvery } = this.run;
    return Math.min(rounds, (Math.floor(this.lastAsked / evalEvery) + 1) * evalEvery);
  }

  /** Whether a round up to the next evaluated one is still to walk. */
  hasWorkAhead(): boolean {
    return this.values.length <= this.nextAsked();
  }

  /** Walks the next round. */
  walkOne(): void {
    this.values.push(this.trajectory.at(this.values.length));
  }
}
