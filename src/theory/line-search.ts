// One damped Newton step: Armijo backtracking along a descent direction (Nocedal and Wright,
// Numerical Optimization, 2nd ed., Alg. 3.1), shared by the dense and the matrix-free Newton
// solvers of the oracle.

import type { Objective } from '../problem/objective.js';
import { axpy, dot, norm2 } from '../vec/kernels.js';

/** Armijo's sufficient-decrease constant and the backtracking factor (Nocedal and Wright, section 3.1). */
const ARMIJO_DECREASE = 1e-4;
const BACKTRACK_FACTOR = 0.5;
const BACKTRACK_STEPS_MAX = 60;

/** The iterate a Newton solver carries: x, f(x), grad f(x) and its norm. */
export interface NewtonState {
  x: Float64Array;
  loss: number;
  gradient: Float64Array;
  gradientNorm: number;
}

/**
 * Moves `state` along `direction` by the first step t = 1, 1/2, ... that passes; returns false
 * (state untouched) when none does.
 */
export function backtrackingStep(
  objective: Objective,
  state: NewtonState,
  direction: Float64Array,
): boolean {
  const trial = new Float64Array(objective.dim);
  const trialGradient = new Float64Array(objective.dim);
  const slope = dot(state.gradient, direction);
  let t = 1;
  for (let k = 0; k < BACKTRACK_STEPS_MAX; k++) {
    trial.set(state.x);
    axpy(t, direction, trial);
    const trialLoss = objective.loss(trial);
    objective.gradient(trial, trialGradient);
    const trialNorm = norm2(trialGradient);
    // Near x* the decrease t * slope falls below the rounding of f itself and Armijo's test
    // turns into noise; the full Newton step is then judged by the gradient norm instead.
    const armijo = trialLoss <= state.loss + ARMIJO_DECREASE * t * slope;
    const belowRounding = -slope <= 1e-12 * Math.max(1, Math.abs(state.loss));
    if (armijo || (belowRounding && trialNorm < state.gradientNorm)) {
      state.x.set(trial);
      state.gradient.set(trialGradient);
      state.loss = trialLoss;
      state.gradientNorm = trialNorm;
      return true;
    }
    t *= BACKTRACK_FACTOR;
  }
  return false;
}
