// The theory's prediction for a run, where DESIGN.md says one exists: for quadratic objectives
// with full gradients, full participation and no compression a round is an affine map of the
// method's whole state, so its asymptotic rate is the spectral radius of the linear part and its
// limit is the fixed point (kind 'exact'). For logistic and softmax under the same conditions the
// round map is smooth but not affine: its limit is its fixed point and the rate is the spectral
// radius of its Jacobian there, which holds once the run is near the limit (kind 'local',
// local-limit.ts). Elsewhere the prediction is absent, with the reason.

import type { Objective } from '../problem/objective.js';
import { DEFAULT_KRYLOV_DIMENSION } from '../linalg/arnoldi.js';
import { predictRate } from '../theory/predict-rate.js';
import { affineFixedPoint, FIXED_POINT_DIMENSION_MAX } from '../theory/fixed-point.js';
import { TheoryError } from '../theory/theory-error.js';
import { LinalgError } from '../linalg/linalg-error.js';
import type { PlanTheory } from '../theory/plan-theory.js';
import { buildRoundMap, predictionBlocker } from './round-map.js';
import type { RunPlan } from './run-plan.js';
import { evaluateModel } from './evaluate.js';
import { roundMapStateEntries } from './method-state-size.js';
import { linearizationBlocker } from './round-map-jacobian.js';
import { localLimit } from './local-limit.js';

/**
 * The largest state (server and every client, flattened) a prediction walks: 2^20 entries, so
 * that what it holds at once, PREDICTION_WORKING_VECTORS vectors of the state's length, stays
 * within 320 MiB. Measured: FedLin on 8 clients at d = 20,000 (860,000 entries) holds about 41
 * vectors and takes about 45 map applications. A state past it is not predicted (the reason says
 * so); the round map would also cost one whole round per application, up to thousands of them.
 */
export const PREDICTION_STATE_ENTRIES_MAX = 2 ** 20;
/**
 * Vectors of the state's length the rate estimate holds at once: the Arnoldi basis, its new
 * vector and restart, the linear part's base, image and probe, and the round map's second copy of
 * every method state, its template and its flattened output.
 */
export const PREDICTION_WORKING_VECTORS = DEFAULT_KRYLOV_DIMENSION + 10;

/** The round map's leading eigenvalue modulus and the next one (see arnoldi.ts). */
export type RoundMapModes = Pick<
  RunPrediction,
  'spectralRadius' | 'subdominantModulus' | 'subdominantRelativeResidual'
> & { spectralRadius: number };

export interface RunPrediction {
  /** null when the prediction is made; else why not */
  unavailableReason: string | null;
  /**
   * 'exact': the round map is affine, the rate holds from the first round; 'local': the round
   * map linearized at its limit, the rate is asymptotic (it holds once the run is near the
   * limit); null: no spectral radius
   */
  kind: 'exact' | 'local' | null;
  /** rho of the round map's linear part (per-round contraction of the state's error) */
  spectralRadius: number | null;
  /**
   * |lambda_2| of the linear part (the next mode after the dominant one and its conjugate or -r
   * partner; predict-rate.ts), null when none was seen; with its Ritz residual relative to rho
   */
  subdominantModulus: number | null;
  subdominantRelativeResidual: number | null;
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
  kind: null,
  spectralRadius: null,
  subdominantModulus: null,
  subdominantRelativeResidual: null,
  rate: null,
  floor: null,
  limitDistance: null,
  limit: null,
});

/** Below this many ulps of the problem's scale (|f*| or the initial gap), a floor is rounding: the limit is x*. */
const floorRoundingUlps = 1e4;

/**
 * Predictions from the zero model, by theory and plan: a coordinator asks for its run's once for
 * the metrics and once at the end, and the round map of a large state costs many rounds' work.
 */
const fromZero = new WeakMap<PlanTheory, Map<string, RunPrediction>>();

export function predictRun(
  plan: RunPlan,
  theory: PlanTheory,
  initialModel?: Float64Array,
): RunPrediction {
  if (initialModel !== undefined) return predictFrom(plan, theory, initialModel);
  let byPlan = fromZero.get(theory);
  if (byPlan === undefined) {
    byPlan = new Map();
    fromZero.set(theory, byPlan);
  }
  let prediction = byPlan.get(plan.planHash);
  if (prediction === undefined) {
    prediction = predictFrom(plan, theory, new Float64Array(plan.dim));
    byPlan.set(plan.planHash, prediction);
  }
  return prediction;
}

function predictFrom(plan: RunPlan, theory: PlanTheory, initialModel: Float64Array): RunPrediction {
  const local = plan.scenario.problem.kind !== 'least-squares';
  const blocker = local ? linearizationBlocker(plan) : predictionBlocker(plan);
  if (blocker) return none(blocker);
  const entries = roundMapStateEntries(plan.scenario, plan.dim);
  if (entries > PREDICTION_STATE_ENTRIES_MAX)
    return none(
      `no prediction: the method's state has ${entries} entries (${plan.scenario.method.name}, ${plan.clientCount} clients, dimension ${plan.dim}), above the limit of ${PREDICTION_STATE_ENTRIES_MAX}`,
    );
  const objectives: readonly Objective[] = theory.instance.objectives;
  if (local) {
    const found = localLimit(plan, objectives, initialModel);
    if ('reason' in found) return none(found.reason);
    return predictionAt(theory, initialModel, found.limit, found.modes, 'local');
  }
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
        `no floor: the method's state has ${roundMap.start.length} entries, above the limit of ${FIXED_POINT_DIMENSION_MAX} for solving its fixed point (only the spectral radius is given)`,
      ),
      kind: 'exact',
      spectralRadius: rate.spectralRadius,
      subdominantModulus: rate.subdominantModulus,
      subdominantRelativeResidual: rate.subdominantRelativeResidual,
    };
  }
  let fixed;
  try {
    fixed = affineFixedPoint(roundMap.map, roundMap.start.length, { base: roundMap.start });
  } catch (error) {
    if (error instanceof TheoryError || error instanceof LinalgError)
      return {
        ...none(`no floor: ${error.message}`),
        kind: 'exact',
        spectralRadius: rate.spectralRadius,
        subdominantModulus: rate.subdominantModulus,
        subdominantRelativeResidual: rate.subdominantRelativeResidual,
      };
    throw error;
  }
  return predictionAt(
    theory,
    initialModel,
    roundMap.modelOf(fixed.state),
    {
      spectralRadius: rate.spectralRadius,
      subdominantModulus: rate.subdominantModulus,
      subdominantRelativeResidual: rate.subdominantRelativeResidual,
    },
    'exact',
  );
}

/** The prediction from the limit and the spectral radius: floor, distance and the rate of f. */
function predictionAt(
  theory: PlanTheory,
  initialModel: Float64Array,
  limit: Float64Array,
  modes: RoundMapModes,
  kind: 'exact' | 'local',
): RunPrediction {
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
    kind,
    ...modes,
    rate: limitIsOptimum ? modes.spectralRadius ** 2 : modes.spectralRadius,
    floor: atLimit.suboptimality,
    limitDistance: atLimit.distance,
    limit,
  };
}
