// The asymptotic rate of an affine round map T(s) = M s + b: the spectral radius rho(M), read
// from applications of T only. Every error s - s* evolves as M^k (s_0 - s*), so ||s_k - s*||
// shrinks like rho^k (Gelfand's formula, rho = lim ||M^k||^(1/k)) and f(x_k) - f*, quadratic in
// the error, like rho^(2k) once the limit is x* itself.
//
// Conserved quantities. A state flattened whole often holds quantities a round never changes
// (SCAFFOLD's c - sum_i p_i c_i, a stored initial model): M has the eigenvalue 1 along them, but
// the error s_k - s* has no part there, since the run keeps the start's values. The rate that
// matters is rho of M on the range of I - M, the directions that move. So the start is (I - M)
// times a seeded random vector, and the iteration keeps out what rounding lets in along the
// conserved directions (see arnoldi.ts, movingOnly). Without conserved quantities I - M is
// invertible and the range is everything: nothing changes but one product per restart.
//
// How rho is read: by the restarted Arnoldi iteration of arnoldi.ts, whose Ritz values see a
// dominant real eigenvalue, a complex pair and a +-r pair alike. Powers of M alone (the plain or
// two-vector power iteration) converge like |lambda_2 / lambda_1|^k, which on federated rounds,
// whose eigenvalues cluster just below the dominant one, takes thousands of rounds; a Krylov
// space of a few dozen vectors separates such a cluster in tens of rounds.

import { linearPart, type RoundMap } from './affine-map.js';
import { operatorSpectralRadius, type DominantKind } from './operator-rate.js';
import type { LinearOperator } from '../linalg/linear-operator.js';
import { TheoryError } from './theory-error.js';

export interface PredictRateOptions {
  /** round-map applications at most, the one at the base state included (default 2000) */
  mapApplicationsMax?: number;
  /** Krylov basis vectors per Arnoldi cycle (default 30) */
  krylovDimension?: number;
  /** the dominant Ritz pair's residual wanted, relative to the spectral radius (default 1e-8) */
  tolerance?: number;
  /** seed of the starting vector (default fixed, so that predictions repeat) */
  seed?: number;
  /** see linearPart */
  probeNorm?: number;
}

export type { DominantKind } from './operator-rate.js';

export interface RatePrediction {
  /** rho(M) on the range of I - M: the per-round contraction of the state's error */
  spectralRadius: number;
  /** rho^2, the per-round contraction of f(x) - f* when the limit is x* */
  perRoundRate: number;
  /** Arnoldi steps (one round-map application each) */
  iterations: number;
  /** round-map applications, including the one at the base state and the filtering products */
  mapApplications: number;
  converged: boolean;
  dominant: DominantKind;
  /** ||M x - lambda x|| of the dominant Ritz pair, relative to the spectral radius */
  relativeResidual: number;
  /**
   * |lambda_2|: the largest modulus of M's other eigenvalues on the moving range (not the
   * dominant's conjugate or -r partner), a by-product of the same Krylov space (arnoldi.ts);
   * null when that space held no other Ritz value
   */
  subdominantModulus: number | null;
  /** the subdominant Ritz pair's residual, relative to the spectral radius (null with it) */
  subdominantRelativeResidual: number | null;
}

const DEFAULT_MAP_APPLICATIONS_MAX = 2000;
const DEFAULT_SEED = 0x0a7e;

/**
 * The predicted asymptotic rate of the method whose round is `map`, from its linear part around
 * `initialState` (any state will do for an affine map; the initial one sets the rounding scale).
 * `converged: false` means the estimate did not settle within mapApplicationsMax: report it as such.
 */
export function predictRate(
  map: RoundMap,
  initialState: Float64Array,
  options: PredictRateOptions = {},
): RatePrediction {
  const mapApplicationsMax = options.mapApplicationsMax ?? DEFAULT_MAP_APPLICATIONS_MAX;
  // The base state, the filtered start and one Arnoldi step.
  if (!Number.isInteger(mapApplicationsMax) || mapApplicationsMax < 3) {
    throw new TheoryError(
      'E_THEORY_ARGUMENT',
      `mapApplicationsMax must be an integer >= 3, got ${mapApplicationsMax}`,
    );
  }
  const dim = initialState.length;
  if (dim < 1)
    throw new TheoryError('E_THEORY_DIMENSION', 'a round map needs a state of length >= 1');
  let applications = 1;
  const linear = linearPart(
    map,
    initialState,
    options.probeNorm === undefined ? {} : { probeNorm: options.probeNorm },
  );
  const counted: LinearOperator = (v) => {
    applications++;
    return linear(v);
  };
  const rate = operatorSpectralRadius(counted, dim, {
    productsMax: mapApplicationsMax - 1,
    seed: options.seed ?? DEFAULT_SEED,
    ...(options.krylovDimension === undefined ? {} : { krylovDimension: options.krylovDimension }),
    ...(options.tolerance === undefined ? {} : { tolerance: options.tolerance }),
  });
  return {
    spectralRadius: rate.spectralRadius,
    perRoundRate: rate.spectralRadius * rate.spectralRadius,
    iterations: rate.iterations,
    mapApplications: applications,
    converged: rate.converged,
    dominant: rate.dominant,
    relativeResidual: rate.relativeResidual,
    subdominantModulus: rate.subdominantModulus,
    subdominantRelativeResidual: rate.subdominantRelativeResidual,
  };
}
