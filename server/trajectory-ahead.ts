// The predicted trajectory (src/engine/predicted-trajectory.ts) walked a little ahead of the
// rounds that ask for it. The ideal run depends on the plan alone, never on the measured run, so
// the oracle thread can walk ideal round r + 1 while the workers compute round r + 1, instead of
// after the coordinator asks for it: the two overlap on separate cores, and every value is the
// one the walk gives in order. At most ROUNDS_AHEAD_MAX rounds past the last one asked are
// walked, so that a run that stops early wastes little.

import type { PredictedTrajectory } from '../src/engine/predicted-trajectory.js';

/** Ideal rounds walked past the last round asked for: the next round's, and one spare. */
export const ROUNDS_AHEAD_MAX = 2;

export class TrajectoryAhead {
  private readonly trajectory: PredictedTrajectory;
  private readonly roundsMax: number;
  /** the predicted f - f* after 0, 1, ... rounds, as walked so far */
  private readonly values: (number | null)[] = [];
  private lastAsked = 0;

  /** `roundsMax`: the run's rounds; nothing past them is walked ahead. */
  constructor(trajectory: PredictedTrajectory, roundsMax: number) {
    this.trajectory = trajectory;
    this.roundsMax = roundsMax;
  }

  /** Predicted f - f* after `round` rounds (PredictedTrajectory.at), walking up to it if needed. */
  at(round: number): number | null {
    this.lastAsked = round;
    // An earlier round than walked (a resumed run asks from its own round on) is kept already.
    while (this.values.length <= round) this.walkOne();
    return this.values[round];
  }

  /** Whether a round ahead is worth walking now. */
  hasWorkAhead(): boolean {
    const next = this.values.length;
    return next <= this.roundsMax && next <= this.lastAsked + ROUNDS_AHEAD_MAX;
  }

  /** Walks the next round. */
  walkOne(): void {
    this.values.push(this.trajectory.at(this.values.length));
  }
}
