// A client's compute time under the speed model. Wall clock: a step takes the base cost times
// the client's factor for the round (stepFactorFor), where the base cost is the larger of the
// scenario's stepCostSeconds and the step time this machine really measured; the worker sleeps
// the difference after computing. Virtual clock: no sleeping; the modelled seconds are reported.

import { stepFactorFor, stepSecondsFor, type SpeedModel } from '../src/timing/round-speed.js';
import { sleepSeconds } from './sleep.js';

export class ComputePacer {
  private readonly speed: SpeedModel;
  private readonly wall: boolean;

  constructor(speed: SpeedModel, wall: boolean) {
    this.speed = speed;
    this.wall = wall;
  }

  /**
   * Called after `steps` local steps that took `measuredSeconds` of real compute; resolves to the
   * compute seconds to report once the client's modelled pace has been kept.
   */
  async pace(
    clientId: number,
    round: number,
    steps: number,
    measuredSeconds: number,
  ): Promise<number> {
    if (!this.wall) return steps * stepSecondsFor(this.speed, clientId, round);
    const stepsCounted = Math.max(1, steps);
    const baseStepSeconds = Math.max(this.speed.stepCostSeconds, measuredSeconds / stepsCounted);
    const targetSeconds =
      stepsCounted * baseStepSeconds * stepFactorFor(this.speed, clientId, round);
    await sleepSeconds(targetSeconds - measuredSeconds);
    return Math.max(targetSeconds, measuredSeconds);
  }
}
