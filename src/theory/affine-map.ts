// A method's round as a map of its whole state s (server model and every client's persistent
// state, flattened to one Float64Array). For quadratic objectives with full gradients and no
// compression every round is affine, T(s) = M s + b; the predictions read M and b through
import type { LinearOperator } from '../linalg/linear-operator.js';
// applications of T only, so that any method the engine can run can be predicted without a
// formula of its own.

import { Rng } from '../base/rng.js';
import { allFinite, norm2 } from '../vec/kernels.js';
import { TheoryError, assertTheoryLength } from './theory-error.js';

/** One round: the state after it, as a new array. Must not modify or keep its argument. */
export type RoundMap = (state: Float64Array) => Float64Array;

export interface LinearPartOptions {
  /**
   * The norm a direction is scaled to before it is added to the base (default
   * 1 + ||base|| + ||T(base)||; see linearPart).
   */
  probeNorm?: number;
}

const DEFAULT_DEFECT_SEED = 0xaff1e;

/** T(state), checked: same length as the state and finite everywhere. */
export function applyRoundMap(map: RoundMap, state: Float64Array): Float64Array {
  const image = map(state);
  assertTheoryLength('round map output', image, state.length);
  if (!allFinite(image)) {
    throw new TheoryError(
      'E_THEORY_NOT_FINITE',
      'the round map returned a non-finite entry (did the method diverge?)',
    );
  }
  return image;
}

/**
 * The linear part M of an affine round map, v -> T(base + t v)/t - T(base)/t with t chosen so
 * that ||t v|| is the probe norm. For an affine T this is M v exactly but for rounding. The
 * difference cancels about eps * (||T(base)|| + ||T(base + t v)||); dividing by t makes that
 * eps * (||T(base)|| / probeNorm + ||M||), so the default probe norm, which is at least
 * ||T(base)||, keeps the error at a few ulps of ||M|| whatever the scale of the state.
 */
export function linearPart(
  map: RoundMap,
  base: Float64Array,
  options: LinearPartOptions = {},
): LinearOperator {
  if (base.length < 1)
    throw new TheoryError('E_THEORY_DIMENSION', 'a round map needs a state of length >= 1');
  if (!allFinite(base))
    throw new TheoryError('E_THEORY_NOT_FINITE', 'the base state has a non-finite entry');
  const fixedBase = Float64Array.from(base);
  const baseImage = applyRoundMap(map, Float64Array.from(fixedBase));
  const probeNorm = options.probeNorm ?? 1 + norm2(fixedBase) + norm2(baseImage);
  if (!(probeNorm > 0) || !Number.isFinite(probeNorm)) {
    throw new TheoryError(
      'E_THEORY_ARGUMENT',
      `the probe norm must be positive and finite, got ${probeNorm}`,
    );
  }
  const dim = fixedBase.length;
  return (v: Float64Array): Float64Array => {
    assertTheoryLength('direction', v, dim);
    const out = new Float64Array(dim);
    const length = norm2(v);
    if (length === 0) return out;
    const t = probeNorm / length;
    const probe = new Float64Array(dim);
    for (let j = 0; j < dim; j++) probe[j] = fixedBase[j] + t * v[j];
    const image = applyRoundMap(map, probe);
    for (let j = 0; j < dim; j++) out[j] = (image[j] - baseImage[j]) / t;
    return out;
  };
}

/**
 * How far T is from affine around `base`: ||T(base + v) + T(base - v) - 2 T(base)|| divided by
 * ||T(base + v) - T(base - v)||, for a seeded random v of norm 1 + ||base||. It is zero to
 * rounding (about 1e-15) for an affine map and of order one for a map that is not (logistic
 * losses, compression, minibatches), so a caller can check that predictions apply at all.
 */
export function affineDefect(
  map: RoundMap,
  base: Float64Array,
  seed: number = DEFAULT_DEFECT_SEED,
): number {
  if (!allFinite(base))
    throw new TheoryError('E_THEORY_NOT_FINITE', 'the base state has a non-finite entry');
  const dim = base.length;
  const rng = Rng.fromSeed(seed);
  const direction = new Float64Array(dim);
  for (let j = 0; j < dim; j++) direction[j] = rng.normal();
  const t = (1 + norm2(base)) / norm2(direction);
  const plus = new Float64Array(dim);
  const minus = new Float64Array(dim);
  for (let j = 0; j < dim; j++) {
    plus[j] = base[j] + t * direction[j];
    minus[j] = base[j] - t * direction[j];
  }
  const center = applyRoundMap(map, Float64Array.from(base));
  const imagePlus = applyRoundMap(map, plus);
  const imageMinus = applyRoundMap(map, minus);
  let curvatureSquared = 0;
  let spreadSquared = 0;
  for (let j = 0; j < dim; j++) {
    const curvature = imagePlus[j] + imageMinus[j] - 2 * center[j];
    const spread = imagePlus[j] - imageMinus[j];
    curvatureSquared += curvature * curvature;
    spreadSquared += spread * spread;
  }
  // A map that forgets its input (M = 0) is affine; say so rather than divide by zero.
  if (spreadSquared === 0) return curvatureSquared === 0 ? 0 : Infinity;
  return Math.sqrt(curvatureSquared / spreadSquared);
}
