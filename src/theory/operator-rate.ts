// The spectral radius of a linear operator known only through products, on the range of I - M
// (the directions that move; see predict-rate.ts on conserved quantities), by restarted Arnoldi.
// predictRate runs it on an affine map's linear part; the local prediction
// of a smooth objective hands it the round map's Jacobian at the fixed point, whose products are
// exact (tangent rounds), so no differences of map applications are taken here.

import { Rng } from '../base/rng.js';
import { dominantEigenvalue } from '../linalg/arnoldi.js';
import type { LinearOperator } from '../linalg/linear-operator.js';
import { TheoryError } from './theory-error.js';

/** Which eigenvalue the spectral radius comes from. */
export type DominantKind =
  /** a real eigenvalue of largest modulus (of a +-r pair, either one) */
  | 'real'
  /** a complex-conjugate pair */
  | 'pair'
  /** the budget ran out first: the dominant Ritz value so far, not converged */
  | 'unsettled';

export interface OperatorRateOptions {
  /** products with the operator at most, the filtering ones included (default 2000) */
  productsMax?: number;
  /** Krylov basis vectors per Arnoldi cycle (default 30) */
  krylovDimension?: number;
  /** the dominant Ritz pair's residual wanted, relative to the spectral radius (default 1e-8) */
  tolerance?: number;
  /** seed of the starting vector (default fixed, so that predictions repeat) */
  seed?: number;
}

export interface OperatorRate {
  /** rho(M) on the range of I - M */
  spectralRadius: number;
  /** modulus of the next eigenvalue (see arnoldi.ts: a by-product, never iterated to a tolerance) */
  subdominantModulus: number | null;
  /** that Ritz pair's residual, relative to the spectral radius (null with it) */
  subdominantRelativeResidual: number | null;
  /** Arnoldi steps */
  iterations: number;
  /** products with the operator */
  products: number;
  converged: boolean;
  dominant: DominantKind;
  /** ||M x - lambda x|| of the dominant Ritz pair, relative to the spectral radius */
  relativeResidual: number;
}

const DEFAULT_PRODUCTS_MAX = 2000;
const DEFAULT_SEED = 0x10ca1;

/** rho of `operator` on vectors of length `dim`; `converged: false` when it did not settle in productsMax. */
export function operatorSpectralRadius(
  operator: LinearOperator,
  dim: number,
  options: OperatorRateOptions = {},
): OperatorRate {
  if (!Number.isInteger(dim) || dim < 1)
    throw new TheoryError('E_THEORY_DIMENSION', `dimension must be a positive integer, got ${dim}`);
  const productsMax = options.productsMax ?? DEFAULT_PRODUCTS_MAX;
  if (!Number.isInteger(productsMax) || productsMax < 2)
    throw new TheoryError(
      'E_THEORY_ARGUMENT',
      `productsMax must be an integer >= 2, got ${productsMax}`,
    );
  const rng = Rng.fromSeed(options.seed ?? DEFAULT_SEED);
  const start = new Float64Array(dim);
  for (let j = 0; j < dim; j++) start[j] = rng.normal();
  const eigenvalue = dominantEigenvalue(operator, start, {
    movingOnly: true,
    productsMax,
    ...(options.krylovDimension === undefined ? {} : { krylovDimension: options.krylovDimension }),
    ...(options.tolerance === undefined ? {} : { tolerance: options.tolerance }),
  });
  const rho = eigenvalue.modulus;
  return {
    spectralRadius: rho,
    subdominantModulus: eigenvalue.subdominant?.modulus ?? null,
    subdominantRelativeResidual:
      eigenvalue.subdominant === null ? null : rho > 0 ? eigenvalue.subdominant.residual / rho : 0,
    iterations: eigenvalue.steps,
    products: eigenvalue.products,
    converged: eigenvalue.converged,
    dominant: !eigenvalue.converged ? 'unsettled' : eigenvalue.imaginary === 0 ? 'real' : 'pair',
    relativeResidual: rho > 0 ? eigenvalue.residual / rho : 0,
  };
}
