// The local (asymptotic) prediction's two ingredients for a smooth objective whose round map is
// not affine: the limit the run reaches, the fixed point s* of the round map by Newton-GMRES
// from the run's own start (newton-fixed-point.ts), and the spectral radius of the round map's
// Jacobian there (exact products by tangent rounds, round-map-jacobian.ts), by the Arnoldi
// iteration every prediction uses. The error of a run that gets close to s* contracts like
// rho(J(s*))^k from then on; far from it nothing is claimed.

import type { Objective } from '../problem/objective.js';
import { FIXED_POINT_DIMENSION_MAX } from '../theory/fixed-point.js';
import { newtonFixedPoint } from '../theory/newton-fixed-point.js';
import { operatorSpectralRadius } from '../theory/operator-rate.js';
import { TheoryError } from '../theory/theory-error.js';
import { LinalgError } from '../linalg/linalg-error.js';
import { roundMapLinearization } from './round-map-jacobian.js';
import { buildRoundMap } from './round-map.js';
import type { RunPlan } from './run-plan.js';
import type { RoundMapModes } from './predict-run.js';

export type LocalLimit =
  | {
      /** the server model at the fixed point */
      limit: Float64Array;
      /** rho(J(s*)) on the directions that move, and the next eigenvalue's modulus */
      modes: RoundMapModes;
    }
  | { reason: string };

/** Products with J(s*) the spectral radius may take. */
const RATE_PRODUCTS_MAX = 2000;

/** The limit from `initialModel` and the local rate there, or why there is none. */
export function localLimit(
  plan: RunPlan,
  objectives: readonly Objective[],
  initialModel: Float64Array,
): LocalLimit {
  const roundMap = buildRoundMap(plan, objectives, initialModel);
  const entries = roundMap.start.length;
  if (entries > FIXED_POINT_DIMENSION_MAX)
    return {
      reason: `no local prediction: the method's state has ${entries} entries, above the limit of ${FIXED_POINT_DIMENSION_MAX} for solving the fixed point where the round map is linearized`,
    };
  let fixed;
  try {
    fixed = newtonFixedPoint(
      roundMapLinearization(plan, objectives, roundMap.template),
      roundMap.start,
    );
  } catch (error) {
    if (error instanceof TheoryError && error.code === 'E_THEORY_NOT_FINITE')
      return { reason: `the round map is not finite (the method diverges): ${error.message}` };
    if (error instanceof TheoryError || error instanceof LinalgError)
      return { reason: `no local prediction: ${error.message}` };
    throw error;
  }
  const rate = operatorSpectralRadius(fixed.jacobian, entries, { productsMax: RATE_PRODUCTS_MAX });
  if (!rate.converged)
    return {
      reason: `the spectral radius of the round map's Jacobian at its fixed point did not settle within ${rate.products} products`,
    };
  return {
    limit: roundMap.modelOf(fixed.state),
    modes: {
      spectralRadius: rate.spectralRadius,
      subdominantModulus: rate.subdominantModulus,
      subdominantRelativeResidual: rate.subdominantRelativeResidual,
    },
  };
}
