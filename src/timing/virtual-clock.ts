// The virtual clock: time as the models account it, with no sleeping, so a run is fast and
// repeats exactly. It only moves forward, by whole rounds (or exchanges).

import { assertFiniteAtLeast } from './errors.js';

/** The clock's whole state, for a checkpoint: both parts, so that a resumed clock adds bit for bit alike. */
export interface VirtualClockState {
  elapsedSeconds: number;
  compensationSeconds: number;
}

export class VirtualClock {
  /** seconds since the run started */
  private elapsedSeconds = 0;
  /**
   * Neumaier compensation: a million rounds of milliseconds would otherwise lose digits of the
   * total to rounding, and the total is reported beside rounds and bytes.
   */
  private compensationSeconds = 0;

  /** Moves the clock by one round's duration; returns the new time. */
  advance(roundSeconds: number): number {
    assertFiniteAtLeast('roundSeconds', roundSeconds, 0);
    const sum = this.elapsedSeconds + roundSeconds;
    if (Math.abs(this.elapsedSeconds) >= Math.abs(roundSeconds)) {
      this.compensationSeconds += this.elapsedSeconds - sum + roundSeconds;
    } else {
      this.compensationSeconds += roundSeconds - sum + this.elapsedSeconds;
    }
    this.elapsedSeconds = sum;
    return this.now();
  }

  /** Virtual seconds since the run started. */
  now(): number {
    return this.elapsedSeconds + this.compensationSeconds;
  }

  /** The clock's state (see VirtualClockState). */
  state(): VirtualClockState {
    return {
      elapsedSeconds: this.elapsedSeconds,
      compensationSeconds: this.compensationSeconds,
    };
  }

  /** A clock that continues from `state`. */
  static fromState(state: VirtualClockState): VirtualClock {
    assertFiniteAtLeast('elapsedSeconds', state.elapsedSeconds, 0);
    assertFiniteAtLeast('compensationSeconds', state.compensationSeconds, -Infinity);
    const clock = new VirtualClock();
    clock.elapsedSeconds = state.elapsedSeconds;
    clock.compensationSeconds = state.compensationSeconds;
    return clock;
  }
}
