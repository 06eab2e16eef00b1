// The fixed point s* = T(s*) of a nonlinear round map, by Newton's method on F(s) = T(s) - s
// with the Jacobian known only through exact products (Jacobian-free Newton-Krylov: Knoll and
// Keyes, J. Comput. Phys. 193(2), 2004; each linear solve by GMRES on (I - J(s)) d = T(s) - s).
//
// Where it starts. Newton converges from close enough only, and a round map is a contraction
// near the limit a run reaches: so plain rounds come first (s <- T(s)) until ||T(s) - s|| has
// fallen to warmupResidualDrop of its first value, or warmupRoundsMax rounds have passed. That
// puts the start on the run's own path, in the basin of the limit the run reaches rather than of
// another fixed point. A Newton step that does not lower ||T(s) - s|| is halved (at most
// BACKTRACKS_MAX times) before the solve gives up.
//
// Conserved quantities (J has the eigenvalue 1 along them; see fixed-point.ts) need nothing
// special: T(s) - s has no part along them, and GMRES from zero keeps its solution in the
// Krylov space of the right-hand side.
//
// When it stops. Converged once ||T(s) - s|| <= CONVERGED_RESIDUAL (||s|| + ||T(s)||), a few
// ulps of the state's size; a step that no longer halves a residual already below
// ACCEPTED_RESIDUAL times that size is stirring rounding, and ends it as well. A residual above
// ACCEPTED_RESIDUAL at the end is a failure, with the residual and the steps in the reason.

import { norm2 } from '../vec/kernels.js';
import { gmres } from '../linalg/gmres.js';
import type { LinearOperator } from '../linalg/linear-operator.js';
import { FIXED_POINT_DIMENSION_MAX, FIXED_POINT_KRYLOV_MAX } from './fixed-point.js';
import { TheoryError } from './theory-error.js';

/** s -> (T(s), v -> J(s) v). */
export type RoundMapLinearization = (state: Float64Array) => {
  image: Float64Array;
  jvp: LinearOperator;
};

export interface NewtonFixedPointOptions {
  /** plain rounds at most before Newton (default 200) */
  warmupRoundsMax?: number;
  /** plain rounds end once ||T(s) - s|| is this fraction of its first value (default 1e-3) */
  warmupResidualDrop?: number;
  /** Newton steps at most (default 20) */
  newtonStepsMax?: number;
}

export interface NewtonFixedPoint {
  state: Float64Array;
  /** ||T(s*) - s*|| */
  residualNorm: number;
  /** v -> J(s*) v, the linearization at the returned state */
  jacobian: LinearOperator;
  warmupRounds: number;
  newtonSteps: number;
  /** products with a Jacobian inside the GMRES solves */
  jacobianProducts: number;
}

const DEFAULT_WARMUP_ROUNDS_MAX = 200;
const DEFAULT_WARMUP_RESIDUAL_DROP = 1e-3;
const DEFAULT_NEWTON_STEPS_MAX = 20;
const BACKTRACKS_MAX = 6;
const CONVERGED_RESIDUAL = 64 * Number.EPSILON;
const ACCEPTED_RESIDUAL = Math.sqrt(Number.EPSILON);
/** GMRES's absolute tolerance, relative to the state's size: below it T(s) - s is rounding. */
const SOLVE_ROUNDING = 16 * Number.EPSILON;

function positiveInteger(name: string, value: number): number {
  if (!Number.isInteger(value) || value < 0)
    throw new TheoryError('E_THEORY_ARGUMENT', `${name} must be an integer >= 0, got ${value}`);
  return value;
}

/**
 * The fixed point of the round map linearized by `linearize`, reached from `start`. Throws
 * E_THEORY_SIZE_LIMIT past FIXED_POINT_DIMENSION_MAX and E_THEORY_NOT_CONVERGED with the
 * reason when ||T(s) - s|| could not be brought to ACCEPTED_RESIDUAL of the state's size.
 */
export function newtonFixedPoint(
  linearize: RoundMapLinearization,
  start: Float64Array,
  options: NewtonFixedPointOptions = {},
): NewtonFixedPoint {
  const dim = start.length;
  if (dim < 1)
    throw new TheoryError('E_THEORY_DIMENSION', 'a round map needs a state of length >= 1');
  if (dim > FIXED_POINT_DIMENSION_MAX)
    throw new TheoryError(
      'E_THEORY_SIZE_LIMIT',
      `fixed points are solved up to dimension ${FIXED_POINT_DIMENSION_MAX}, got ${dim}`,
    );
  const warmupRoundsMax = positiveInteger(
    'warmupRoundsMax',
    options.warmupRoundsMax ?? DEFAULT_WARMUP_ROUNDS_MAX,
  );
  const newtonStepsMax = positiveInteger(
    'newtonStepsMax',
    options.newtonStepsMax ?? DEFAULT_NEWTON_STEPS_MAX,
  );
  const drop = options.warmupResidualDrop ?? DEFAULT_WARMUP_RESIDUAL_DROP;
  if (!(drop > 0 && drop < 1))
    throw new TheoryError('E_THEORY_ARGUMENT', `warmupResidualDrop must be in (0, 1), got ${drop}`);

  let state: Float64Array = Float64Array.from(start);
  let at = linearize(state);
  const residual = new Float64Array(dim);
  const measure = (s: Float64Array, image: Float64Array, out: Float64Array) => {
    for (let j = 0; j < dim; j++) out[j] = image[j] - s[j];
    return { norm: norm2(out), scale: norm2(s) + norm2(image) };
  };
  let { norm, scale } = measure(state, at.image, residual);
  const converged = () => norm <= CONVERGED_RESIDUAL * scale;

  const firstNorm = norm;
  let warmupRounds = 0;
  while (warmupRounds < warmupRoundsMax && norm > drop * firstNorm && !converged()) {
    state = at.image;
    at = linearize(state);
    ({ norm, scale } = measure(state, at.image, residual));
    warmupRounds++;
  }

  let newtonSteps = 0;
  let jacobianProducts = 0;
  const candidateResidual = new Float64Array(dim);
  while (newtonSteps < newtonStepsMax && !converged()) {
    const jacobian = at.jvp;
    const identityMinusJ = (v: Float64Array): Float64Array => {
      const image = jacobian(v);
      for (let j = 0; j < dim; j++) image[j] = v[j] - image[j];
      return image;
    };
    const solve = gmres(identityMinusJ, residual, {
      iterationsMax: Math.min(dim, FIXED_POINT_KRYLOV_MAX),
      absoluteTolerance: SOLVE_ROUNDING * scale,
    });
    jacobianProducts += solve.products;
    let accepted = null;
    for (let halving = 0, t = 1; halving <= BACKTRACKS_MAX; halving++, t /= 2) {
      const candidate = new Float64Array(dim);
      for (let j = 0; j < dim; j++) candidate[j] = state[j] + t * solve.solution[j];
      const candidateAt = linearize(candidate);
      const measured = measure(candidate, candidateAt.image, candidateResidual);
      if (measured.norm < norm) {
        accepted = { candidate, candidateAt, measured };
        break;
      }
    }
    if (accepted === null) break;
    const previousNorm = norm;
    state = accepted.candidate;
    at = accepted.candidateAt;
    residual.set(candidateResidual);
    ({ norm, scale } = accepted.measured);
    newtonSteps++;
    if (norm <= ACCEPTED_RESIDUAL * scale && !(norm < 0.5 * previousNorm)) break;
  }

  if (norm > ACCEPTED_RESIDUAL * scale)
    throw new TheoryError(
      'E_THEORY_NOT_CONVERGED',
      `Newton's method left ||T(s) - s|| at ${norm.toExponential(3)} (${(norm / scale).toExponential(3)} of the state's size) after ${warmupRounds} plain rounds and ${newtonSteps} Newton steps`,
    );
  return {
    state,
    residualNorm: norm,
    jacobian: at.jvp,
    warmupRounds,
    newtonSteps,
    jacobianProducts,
  };
}
