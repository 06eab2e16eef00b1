// Damped Newton from x = 0 to the certificate: Armijo backtracking along a descent direction
// (Nocedal and Wright, Numerical Optimization, 2nd ed., Alg. 3.1), shared by the dense and the
// matrix-free Newton solvers of the oracle, which differ only in how they find the direction.

import type { Objective } from '../problem/objective.js';
import { axpy, dot, norm2 } from '../vec/kernels.js';
import { notCertified, type OptimumCertificate } from './oracle-certificate.js';

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

/**
 * Newton's iterations from x = 0 until ||grad f|| <= tolerance, each along `directionAt(state)`
 * (a descent direction) with a backtracking step; throws the oracle's not-certified error at the
 * iteration cap or when no step decreases f.
 */
export function dampedNewton(
  objective: Objective,
  tolerance: number,
  iterationsMax: number,
  directionAt: (state: NewtonState) => Float64Array,
): OptimumCertificate {
  const n = objective.dim;
  const state: NewtonState = {
    x: new Float64Array(n),
    loss: 0,
    gradient: new Float64Array(n),
    gradientNorm: 0,
  };
  state.loss = objective.loss(state.x);
  objective.gradient(state.x, state.gradient);
  state.gradientNorm = norm2(state.gradient);
  let iterations = 0;
  while (state.gradientNorm > tolerance) {
    if (iterations >= iterationsMax)
      throw notCertified(state.gradientNorm, tolerance, iterations, 'iteration cap');
    const accepted = backtrackingStep(objective, state, directionAt(state));
    iterations++;
    if (!accepted)
      throw notCertified(
        state.gradientNorm,
        tolerance,
        iterations,
        'line search found no decrease',
      );
  }
  return { x: state.x, loss: state.loss, gradientNorm: state.gradientNorm, iterations };
}
