// The limit of an affine round map T(s) = M s + b reached from a start s_0: the fixed point
// s* = T(s*) with s* - s_0 in the range of I - M. When 1 is not an eigenvalue of M that is the
// unique fixed point. When it is, the round conserves some quantities (SCAFFOLD's c - sum_i p_i c_i,
// a constant leaf of the state such as a stored initial model) and fixed points form a family;
// the iterates never move along the conserved directions, so the one they reach is the one
// whose conserved quantities are the start's. Both cases are one solve:
//   (I - M) d = T(s_0) - s_0,  d in range(I - M),  s* = s_0 + d,
// by GMRES on the products (I - M) v = v - (T(s_0 + v) - T(s_0)) (one round each), whose
// iterates stay in that range (see gmres.ts). The solution is then refined against T itself:
// each residual T(s) - s comes from a real round, so the returned residual certifies the limit
// whatever the rounding in the products. If T(s) - s cannot be driven to rounding level, the
// round map has no fixed point in reach: a part of T(s_0) - s_0 lies along a conserved
// direction, so the state drifts there every round.

import { norm2 } from '../vec/kernels.js';
import { applyRoundMap, linearPart, type RoundMap } from './affine-map.js';
import { gmres } from '../linalg/gmres.js';
import { TheoryError, assertTheoryLength } from './theory-error.js';

export interface FixedPointOptions {
  /** the start s_0 whose limit is wanted; also where the linear part is read (default 0) */
  base?: Float64Array;
  /** refinement solves at most after the first (default 3) */
  refinementsMax?: number;
  /** GMRES steps (rounds) at most per solve (default: the dimension, at most FIXED_POINT_KRYLOV_MAX) */
  iterationsMax?: number;
}

export interface AffineFixedPoint {
  /** s* with T(s*) = s*, the limit from the base */
  state: Float64Array;
  /** ||T(s*) - s*||, from one more application of T */
  residualNorm: number;
  /** refinement solves taken after the first */
  refinements: number;
  /** round-map applications in all */
  mapApplications: number;
}

/**
 * GMRES keeps one basis vector of dim entries per step, and each step is one round: the steps per
 * solve are capped so that the basis stays within 64 MiB at this dimension and a solve within a
 * few hundred rounds. Round maps contract on most directions, so their solves need far fewer
 * (tens on the bundled scenarios); a cap that is hit ends in E_NOT_CONVERGED, not in a long wait.
 */
export const FIXED_POINT_DIMENSION_MAX = 16384;
export const FIXED_POINT_KRYLOV_MAX = 512;
const DEFAULT_REFINEMENTS_MAX = 3;
/**
 * A certified residual above sqrt(eps) times the size of the state and its image is not
 * rounding: there is no fixed point in reach (a solved one sits at a few ulps).
 */
const ACCEPTED_RESIDUAL = Math.sqrt(Number.EPSILON);
/** A few ulps of the state's size: what one round's rounding leaves in T(s) - s. */
const RESIDUAL_ROUNDING = 16 * Number.EPSILON;

/** out <- T(s) - s; returns [||T(s) - s||, ||T(s)||]. */
function fixedPointResidual(map: RoundMap, s: Float64Array, out: Float64Array): [number, number] {
  const image = applyRoundMap(map, Float64Array.from(s));
  for (let j = 0; j < s.length; j++) out[j] = image[j] - s[j];
  return [norm2(out), norm2(image)];
}

/**
 * The limit of the affine round map `map` from `options.base` on states of length `dim`. Throws
 * E_SINGULAR when there is none in reach (the state drifts along a conserved direction),
 * E_NOT_CONVERGED when GMRES ran out of steps first, E_SIZE_LIMIT beyond FIXED_POINT_DIMENSION_MAX.
 */
export function affineFixedPoint(
  map: RoundMap,
  dim: number,
  options: FixedPointOptions = {},
): AffineFixedPoint {
  if (!Number.isInteger(dim) || dim < 1)
    throw new TheoryError('E_THEORY_DIMENSION', `dimension must be a positive integer, got ${dim}`);
  if (dim > FIXED_POINT_DIMENSION_MAX) {
    throw new TheoryError(
      'E_THEORY_SIZE_LIMIT',
      `fixed points are solved up to dimension ${FIXED_POINT_DIMENSION_MAX}, got ${dim}`,
    );
  }
  const refinementsMax = options.refinementsMax ?? DEFAULT_REFINEMENTS_MAX;
  if (!Number.isInteger(refinementsMax) || refinementsMax < 0) {
    throw new TheoryError(
      'E_THEORY_ARGUMENT',
      `refinementsMax must be an integer >= 0, got ${refinementsMax}`,
    );
  }
  const iterationsMax = options.iterationsMax ?? Math.min(dim, FIXED_POINT_KRYLOV_MAX);
  const base = options.base ?? new Float64Array(dim);
  assertTheoryLength('base state', base, dim);

  let applications = 0;
  const counted: RoundMap = (state) => {
    applications++;
    return map(state);
  };
  const linear = linearPart(counted, base);
  const identityMinusM = (v: Float64Array): Float64Array => {
    const image = linear(v);
    for (let j = 0; j < dim; j++) image[j] = v[j] - image[j];
    return image;
  };

  const state = Float64Array.from(base);
  const residual = new Float64Array(dim);
  let [residualNorm, imageNorm] = fixedPointResidual(counted, state, residual);
  let refinements = -1;
  let exhausted = false;
  const candidate = new Float64Array(dim);
  const candidateResidual = new Float64Array(dim);
  while (refinements < refinementsMax && residualNorm > 0) {
    // Below the rounding of T at this state the residual is noise, partly along the conserved
    // directions, where a solve would only pick up what the iteration never does.
    const roundingLevel = RESIDUAL_ROUNDING * (norm2(state) + imageNorm);
    const solve = gmres(identityMinusM, residual, {
      iterationsMax,
      absoluteTolerance: roundingLevel,
    });
    exhausted = solve.exhausted;
    for (let j = 0; j < dim; j++) candidate[j] = state[j] + solve.solution[j];
    const [candidateNorm, candidateImageNorm] = fixedPointResidual(
      counted,
      candidate,
      candidateResidual,
    );
    if (!(candidateNorm < residualNorm)) break;
    const previousNorm = residualNorm;
    state.set(candidate);
    residual.set(candidateResidual);
    residualNorm = candidateNorm;
    imageNorm = candidateImageNorm;
    refinements++;
    // Once a solve no longer halves the residual, refinement is stirring rounding.
    if (refinements > 0 && !(candidateNorm < 0.5 * previousNorm)) break;
  }

  if (residualNorm > ACCEPTED_RESIDUAL * (norm2(state) + imageNorm)) {
    if (exhausted) {
      throw new TheoryError(
        'E_THEORY_SINGULAR',
        `the round map has no fixed point in reach: ||T(s) - s|| stays at ${residualNorm.toExponential(3)} ` +
          '(I - M is singular and the state drifts along a direction the round conserves)',
      );
    }
    throw new TheoryError(
      'E_THEORY_NOT_CONVERGED',
      `GMRES left ||T(s) - s|| at ${residualNorm.toExponential(3)} after ${iterationsMax} steps per solve`,
    );
  }
  return {
    state,
    residualNorm,
    refinements: Math.max(refinements, 0),
    mapApplications: applications,
  };
}
