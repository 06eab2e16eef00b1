// The reference a nonconvex objective is measured against, in place of x* and f*: a long,
// deterministic, centralised run on the pooled objective f = sum_i p_i f_i from the run's own
// starting point. Its end is a reference, not an optimum: another start or a longer budget may
// find a lower loss, and a federated run may end below it (the gap is then negative).
//
// The method is L-BFGS (Nocedal and Wright, Numerical Optimization, 2nd ed., Alg. 7.4, the
// two-loop recursion, with the initial scaling of eq. 7.20) along Armijo backtracking steps
// (line-search.ts). A pair (s, y) with s . y not clearly positive is skipped, as the same
// book advises (section 7.2), so that the direction stays one of descent where f is not convex.
// It stops at the budget, at a gradient norm of STATIONARY_GRADIENT_NORM, or when no step
// decreases f; every operation is in a fixed order, so the reference is the same bits each time.

import type { Objective } from '../problem/objective.js';
import { axpy, dot, norm2, scale, subtract } from '../vec/kernels.js';
import { backtrackingStep, type NewtonState } from './line-search.js';

/** L-BFGS iterations of the reference: the stated budget (README.md, "A nonconvex model"). */
export const REFERENCE_ITERATIONS_MAX = 1000;
/** Pairs (s, y) kept: 10 is the book's usual choice (Nocedal and Wright, section 7.2). */
const MEMORY_PAIRS = 10;
/** The reference stops early at this gradient norm: a stationary point to rounding. */
const STATIONARY_GRADIENT_NORM = 1e-10;
/** s . y below this multiple of ||s|| ||y|| counts as no curvature along s (pair skipped). */
const CURVATURE_RELATIVE_MIN = 1e-10;

export interface ReferenceRun {
  x: Float64Array;
  /** f at x: the reference loss */
  loss: number;
  /** ||grad f(x)||, recomputed at x */
  gradientNorm: number;
  /** L-BFGS iterations taken */
  iterations: number;
  /** why it stopped */
  ending: 'budget' | 'stationary' | 'no-decrease';
}

/** L-BFGS on `objective` from `start` for at most `iterationsMax` iterations. */
export function referenceRun(
  objective: Objective,
  start: Float64Array,
  iterationsMax: number = REFERENCE_ITERATIONS_MAX,
): ReferenceRun {
  const dim = objective.dim;
  const state: NewtonState = {
    x: Float64Array.from(start),
    loss: objective.loss(start),
    gradient: new Float64Array(dim),
    gradientNorm: 0,
  };
  objective.gradient(state.x, state.gradient);
  state.gradientNorm = norm2(state.gradient);
  const pairs: { s: Float64Array; y: Float64Array; rho: number }[] = [];
  const direction = new Float64Array(dim);
  const previousX = new Float64Array(dim);
  const previousGradient = new Float64Array(dim);
  let iterations = 0;
  let ending: ReferenceRun['ending'] = 'budget';
  while (iterations < iterationsMax) {
    if (state.gradientNorm <= STATIONARY_GRADIENT_NORM) {
      ending = 'stationary';
      break;
    }
    twoLoopDirection(state.gradient, pairs, direction);
    previousX.set(state.x);
    previousGradient.set(state.gradient);
    if (!backtrackingStep(objective, state, direction)) {
      ending = 'no-decrease';
      break;
    }
    iterations++;
    const s = new Float64Array(dim);
    const y = new Float64Array(dim);
    subtract(state.x, previousX, s);
    subtract(state.gradient, previousGradient, y);
    const sy = dot(s, y);
    if (sy > CURVATURE_RELATIVE_MIN * norm2(s) * norm2(y)) {
      if (pairs.length === MEMORY_PAIRS) pairs.shift();
      pairs.push({ s, y, rho: 1 / sy });
    }
  }
  return {
    x: state.x,
    loss: state.loss,
    gradientNorm: state.gradientNorm,
    iterations,
    ending,
  };
}

/**
 * direction <- -H g, H the L-BFGS inverse-Hessian estimate from the pairs (oldest first), its
 * initial matrix (s . y / y . y) I from the newest pair; -g itself when there is none.
 */
function twoLoopDirection(
  gradient: Float64Array,
  pairs: readonly { s: Float64Array; y: Float64Array; rho: number }[],
  direction: Float64Array,
): void {
  const q = direction;
  q.set(gradient);
  const alphas = new Float64Array(pairs.length);
  for (let k = pairs.length - 1; k >= 0; k--) {
    const { s, y, rho } = pairs[k];
    alphas[k] = rho * dot(s, q);
    axpy(-alphas[k], y, q);
  }
  if (pairs.length > 0) {
    const { s, y } = pairs[pairs.length - 1];
    scale(dot(s, y) / dot(y, y), q);
  }
  for (let k = 0; k < pairs.length; k++) {
    const { s, y, rho } = pairs[k];
    const beta = rho * dot(y, q);
    axpy(alphas[k] - beta, s, q);
  }
  scale(-1, q);
}
