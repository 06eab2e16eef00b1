// The theory's prediction for a run, where DESIGN.md says one exists: for quadratic objectives
// with full gradients, full participation and no compression a round is an affine map of the
// method's whole state, so its asymptotic rate is the spectral radius of the linear part and its
// limit is the fixed point. Elsewhere the prediction is absent, with the reason.

import type { Objective } from '../problem/objective.js';
import { predictRate } from '../theory/predict-rate.js';
import { affineFixedPoint, FIXED_POINT_DIMENSION_MAX } from '../theory/fixed-point.js';
import { TheoryError } from '../theory/theory-error.js';
import { LinalgError } from '../linalg/linalg-error.js';
import type { PlanTheory } from '../theory/plan-theory.js';
import { buildRoundMap, predictionBlocker } from './round-map.js';
import type { RunPlan } from './run-plan.js';
import { evaluateModel } from './evaluate.js';

export interface RunPrediction {
  /** null when the prediction is made; else why not */
  unavailableReason: string | null;
  /** rho of the round map's linear part (per-round contraction of the state's error) */
  spectralRadius: number | null;
  /**
   * Per-round contraction of f(x) - (its limit): rho^2 when the limit is x* (f - f* is quadratic
   * in the error there), rho when it is not (the gradient at the limit is not zero, so f moves
   * linearly in the error).
   */
  rate: number | null;
  /** f(limit) - f*, the predicted error floor (0 up to rounding when the limit is x*) */
  floor: number | null;
  /** ||limit - x*|| */
  limitDistance: number | null;
  /** the limiting model itself, when the state was small enough to solve for it */
  limit: Float64Array | null;
}

const none = (reason: string): RunPrediction => ({
  unavailableReason: reason,
  spectralRadius: null,
  rate: null,
  floor: null,
  limitDistance: null,
  limit: null,
});

/** Below this many ulps of the problem's scale (|f*| or the initial gap), a floor is rounding: the limit is x*. */
const floorRoundingUlps = 1e4;

export function predictRun(
  plan: RunPlan,
  theory: PlanTheory,
  initialModel: Float64Array = new Float64Array(plan.dim),
): RunPrediction {
  const blocker = predictionBlocker(plan);
  if (blocker) return none(blocker);
  const objectives: readonly Objective[] = theory.instance.objectives;
  const roundMap = buildRoundMap(plan, objectives, initialModel);
  let rate;
  try {
    rate = predictRate(roundMap.map, roundMap.start);
  } catch (error) {
    // A step size past any stability bound overflows the round map itself; the run that
    // follows stops as diverged, and its results still need their (absent) prediction.
    if (error instanceof TheoryError && error.code === 'E_THEORY_NOT_FINITE')
      return none(`the round map is not finite (the method diverges): ${error.message}`);
    throw error;
  }
  if (!rate.converged)
    return none(
      `the spectral radius did not settle within ${rate.mapApplications} round-map applications`,
    );
  // Without the limit the floor is missing, and so is the rate of f: rho^2 or rho depends on
  // whether the limit is x*. The spectral radius is still reported.
  if (roundMap.start.length > FIXED_POINT_DIMENSION_MAX) {
    return {
      ...none(
        `no floor: the state has ${roundMap.start.length} entries; fixed points are solved up to ${FIXED_POINT_DIMENSION_MAX}`,
      ),
      spectralRadius: rate.spectralRadius,
    };
  }
  let fixed;
  try {
    fixed = affineFixedPoint(roundMap.map, roundMap.start.length, { base: roundMap.start });
  } catch (error) {
    if (error instanceof TheoryError || error instanceof LinalgError)
      return { ...none(`no floor: ${error.message}`), spectralRadius: rate.spectralRadius };
    throw error;
  }
  const limit = roundMap.modelOf(fixed.state);
  const atLimit = evaluateModel(
    theory.instance.global,
    theory.optimum.x,
    theory.optimum.loss,
    limit,
  );
  const initial = evaluateModel(
    theory.instance.global,
    theory.optimum.x,
    theory.optimum.loss,
    initialModel,
  );
  const scale = Math.max(Math.abs(theory.optimum.loss), initial.suboptimality, Number.MIN_VALUE);
  const limitIsOptimum = atLimit.suboptimality <= floorRoundingUlps * Number.EPSILON * scale;
  return {
    unavailableReason: null,
    spectralRadius: rate.spectralRadius,
    rate: limitIsOptimum ? rate.perRoundRate : rate.spectralRadius,
    floor: atLimit.suboptimality,
    limitDistance: atLimit.distance,
    limit,
  };
}
