// Extreme eigenvalues of a symmetric operator known only through products v -> A v: the
// Hessians of our objectives (through Hessian-vector products) and the Gram matrices of the
// shards. Lanczos with full reorthogonalization (Golub and Van Loan, Matrix Computations, 4th
// ed., section 10.3): the dimensions here are small enough to keep every Lanczos vector, and
// keeping them orthogonal removes the spurious copies of converged Ritz values that plain
// Lanczos produces. After `dim` steps, or on reaching an invariant subspace, the tridiagonal
// matrix has exactly the operator's eigenvalues, so for a constant Hessian the result is exact to
// rounding; usually the extremes converge in far fewer steps.

import { Rng } from '../base/rng.js';
import { axpy, dot, norm2, scale } from '../vec/kernels.js';
import { LinalgError } from './linalg-error.js';

/** out <- A v for a symmetric A; must not keep or modify v. */
export type SymmetricOperator = (v: Float64Array, out: Float64Array) => void;

export interface ExtremeEigenvalues {
  smallest: number;
  largest: number;
  /** Lanczos steps taken (operator applications) */
  iterations: number;
  /**
   * false only with `whenUnconverged: 'estimate'`: the step cap came first, and smallest and
   * largest are the last Ritz values, which lie inside the spectrum (Cauchy interlacing: the
   * smallest Ritz value is >= the smallest eigenvalue, the largest <= the largest) but are not
   * yet accurate to the tolerance
   */
  converged: boolean;
}

export interface LanczosOptions {
  /** Stop once each extreme's error estimate is below this times its magnitude (default 1e-13). */
  relativeTolerance?: number;
  /** At most this many steps; the dimension caps it as well (default 1000). */
  iterationsMax?: number;
  /** Seed of the starting vector (default fixed, so that results repeat). */
  seed?: number;
  /**
   * At the step cap: 'throw' (default) refuses, since a Ritz value that has not converged is not
   * a bound; 'estimate' returns the last Ritz values marked `converged: false`, for a report
   * that shows them as estimates.
   */
  whenUnconverged?: 'throw' | 'estimate';
}

const EPSILON = Number.EPSILON;
const DEFAULT_RELATIVE_TOLERANCE = 1e-13;
/** Steps, and so basis vectors kept, unless asked otherwise; the memory estimate counts them. */
export const DEFAULT_ITERATIONS_MAX = 1000;
const DEFAULT_SEED = 0x5eed;
/** Implicit QL needs a handful of sweeps per eigenvalue; more means a broken input. */
const QL_SWEEPS_MAX = 60;
/**
 * The residual must be this small relative to the operator's norm before the quadratic error
 * estimate residual^2 / gap is trusted: the gap is only estimated from neighbouring Ritz values.
 */
const RESIDUAL_TRUST = 1e-6;
/** Far above the rounding of any product we form: an eigenvalue below -slack * largest is real. */
const SEMIDEFINITE_SLACK = 1e-8;

export interface TridiagonalEigen {
  /** eigenvalues, unordered */
  values: Float64Array;
  /** last component of each unit eigenvector (the Lanczos residual weight of that Ritz pair) */
  lastComponents: Float64Array;
}

/**
 * Eigenvalues of the symmetric tridiagonal matrix with the given diagonal (length n) and
 * off-diagonal (length n - 1), by the implicit QL method with Wilkinson shifts (Golub and Van
 * Loan, section 8.3). Only the bottom row of the eigenvector matrix is accumulated, which costs
 * O(n) per rotation instead of O(n^2) (the trick of Golub and Welsch, Math. Comp. 1969, who kept
 * the top row).
 */
export function tridiagonalEigen(
  diagonal: ArrayLike<number>,
  offDiagonal: ArrayLike<number>,
): TridiagonalEigen {
  const n = diagonal.length;
  if (n < 1 || offDiagonal.length !== n - 1) {
    throw new LinalgError(
      'E_LINALG_DIMENSION',
      `tridiagonal needs n >= 1 and n - 1 off-diagonal entries, got ${n} and ${offDiagonal.length}`,
    );
  }
  const d = Float64Array.from(diagonal);
  // e[i] couples d[i] and d[i + 1]; e[n - 1] is a zero sentinel.
  const e = new Float64Array(n);
  for (let i = 0; i < n - 1; i++) e[i] = offDiagonal[i];
  const z = new Float64Array(n);
  z[n - 1] = 1;
  for (let l = 0; l < n; l++) {
    let sweeps = 0;
    for (;;) {
      let m = l;
      for (; m < n - 1; m++) {
        if (Math.abs(e[m]) <= EPSILON * (Math.abs(d[m]) + Math.abs(d[m + 1]))) break;
      }
      if (m === l) break;
      if (++sweeps > QL_SWEEPS_MAX) {
        throw new LinalgError(
          'E_LINALG_NOT_CONVERGED',
          `implicit QL did not split off eigenvalue ${l} in ${QL_SWEEPS_MAX} sweeps`,
        );
      }
      let g = (d[l + 1] - d[l]) / (2 * e[l]);
      let r = Math.hypot(g, 1);
      g = d[m] - d[l] + e[l] / (g + (g >= 0 ? r : -r));
      let s = 1;
      let c = 1;
      let p = 0;
      let deflated = false;
      for (let i = m - 1; i >= l; i--) {
        let f = s * e[i];
        const b = c * e[i];
        r = Math.hypot(f, g);
        e[i + 1] = r;
        if (r === 0) {
          // The rotation underflowed: the matrix split at i + 1; restart on the smaller block.
          d[i + 1] -= p;
          e[m] = 0;
          deflated = true;
          break;
        }
        s = f / r;
        c = g / r;
        g = d[i + 1] - p;
        r = (d[i] - g) * s + 2 * c * b;
        p = s * r;
        d[i + 1] = g + p;
        g = c * r - b;
        f = z[i + 1];
        z[i + 1] = s * z[i] + c * f;
        z[i] = c * z[i] - s * f;
      }
      if (deflated) continue;
      d[l] -= p;
      e[l] = g;
      e[m] = 0;
    }
  }
  return { values: d, lastComponents: z };
}

/** The extreme Ritz values of one Lanczos step and an estimate of how far each is from the truth. */
interface RitzExtremes {
  smallest: number;
  largest: number;
  smallestError: number;
  largestError: number;
  /** both residuals are small enough for the quadratic estimate (see RESIDUAL_TRUST) */
  trusted: boolean;
  /** the largest's residual alone is */
  largestTrusted: boolean;
}

function ritzExtremes(alphas: number[], betas: number[], residualBeta: number): RitzExtremes {
  const { values, lastComponents } = tridiagonalEigen(alphas, betas.slice(0, alphas.length - 1));
  const k = values.length;
  let lo = 0;
  let hi = 0;
  for (let i = 1; i < k; i++) {
    if (values[i] < values[lo]) lo = i;
    if (values[i] > values[hi]) hi = i;
  }
  // The nearest other Ritz value stands in for the gap to the rest of the spectrum.
  let gapLo = Infinity;
  let gapHi = Infinity;
  for (let i = 0; i < k; i++) {
    if (i !== lo) gapLo = Math.min(gapLo, values[i] - values[lo]);
    if (i !== hi) gapHi = Math.min(gapHi, values[hi] - values[i]);
  }
  const normEstimate = Math.max(Math.abs(values[lo]), Math.abs(values[hi]));
  // A Ritz pair (theta, y) has residual ||A y - theta y|| = beta_k |last component of y|; the
  // eigenvalue error is at most the residual, and at most residual^2 / gap once the pair is
  // isolated (Parlett, The Symmetric Eigenvalue Problem, Thm 11.7.1 and section 11.5).
  const residualLo = Math.abs(residualBeta * lastComponents[lo]);
  const residualHi = Math.abs(residualBeta * lastComponents[hi]);
  return {
    smallest: values[lo],
    largest: values[hi],
    smallestError: Math.min(residualLo, (residualLo * residualLo) / gapLo),
    largestError: Math.min(residualHi, (residualHi * residualHi) / gapHi),
    trusted: Math.max(residualLo, residualHi) <= RESIDUAL_TRUST * normEstimate,
    largestTrusted: residualHi <= RESIDUAL_TRUST * normEstimate,
  };
}

/** Which extremes must meet the tolerance before Lanczos stops. */
type Wanted = 'both' | 'largest';

function isConverged(ritz: RitzExtremes, relativeTolerance: number, wanted: Wanted): boolean {
  const normEstimate = Math.max(Math.abs(ritz.smallest), Math.abs(ritz.largest));
  // Below a few ulps of the norm no iteration can do better: that is rounding, not truncation.
  const floor = 4 * EPSILON * normEstimate;
  const accurate = (value: number, error: number) =>
    error <= Math.max(relativeTolerance * Math.abs(value), floor);
  if (wanted === 'largest') return ritz.largestTrusted && accurate(ritz.largest, ritz.largestError);
  return (
    ritz.trusted &&
    accurate(ritz.smallest, ritz.smallestError) &&
    accurate(ritz.largest, ritz.largestError)
  );
}

/** Subtracts from w its components along every stored Lanczos vector (modified Gram-Schmidt). */
function orthogonalize(w: Float64Array, basis: readonly Float64Array[]): void {
  for (let i = 0; i < basis.length; i++) axpy(-dot(basis[i], w), basis[i], w);
}

/**
 * Smallest and largest eigenvalue of a symmetric operator on R^dim. Throws E_NOT_CONVERGED if the
 * tolerance is not met within the step cap (a Ritz value that has not converged is not a bound).
 */
export function extremeEigenvalues(
  apply: SymmetricOperator,
  dim: number,
  options: LanczosOptions = {},
): ExtremeEigenvalues {
  return lanczosExtremes(apply, dim, options, 'both');
}

/**
 * The largest eigenvalue alone, to the same tolerance: the top of a spectrum usually converges in
 * far fewer steps than its bottom, and a curvature bound needs nothing else.
 */
export function largestEigenvalue(
  apply: SymmetricOperator,
  dim: number,
  options: LanczosOptions = {},
): { largest: number; iterations: number } {
  const { largest, iterations } = lanczosExtremes(apply, dim, options, 'largest');
  return { largest, iterations };
}

function lanczosExtremes(
  apply: SymmetricOperator,
  dim: number,
  options: LanczosOptions,
  wanted: Wanted,
): ExtremeEigenvalues {
  if (!Number.isInteger(dim) || dim < 1) {
    throw new LinalgError(
      'E_LINALG_DIMENSION',
      `an operator needs a positive integer dimension, got ${dim}`,
    );
  }
  const relativeTolerance = options.relativeTolerance ?? DEFAULT_RELATIVE_TOLERANCE;
  const stepsMax = Math.min(dim, options.iterationsMax ?? DEFAULT_ITERATIONS_MAX);
  const rng = Rng.fromSeed(options.seed ?? DEFAULT_SEED);
  let q = new Float64Array(dim);
  for (let j = 0; j < dim; j++) q[j] = rng.normal();
  scale(1 / norm2(q), q);

  const basis: Float64Array[] = [];
  const alphas: number[] = [];
  const betas: number[] = [];
  for (let step = 0; step < stepsMax; step++) {
    basis.push(q);
    const w = new Float64Array(dim);
    apply(q, w);
    for (let j = 0; j < dim; j++) {
      if (!Number.isFinite(w[j])) {
        throw new LinalgError(
          'E_LINALG_NOT_FINITE',
          `the operator returned a non-finite entry at step ${step}`,
        );
      }
    }
    const alpha = dot(q, w);
    alphas.push(alpha);
    axpy(-alpha, q, w);
    if (step > 0) axpy(-betas[step - 1], basis[step - 1], w);
    // Twice is enough (Parlett, section 6.9): one pass leaves errors of order eps * kappa.
    orthogonalize(w, basis);
    orthogonalize(w, basis);
    const beta = norm2(w);
    betas.push(beta);
    const ritz = ritzExtremes(alphas, betas, beta);
    const normEstimate = Math.max(Math.abs(ritz.smallest), Math.abs(ritz.largest));
    // An invariant subspace (beta at rounding level) or a full basis makes the Ritz values exact.
    const exhausted = step + 1 === dim || beta <= dim * EPSILON * normEstimate;
    if (exhausted || isConverged(ritz, relativeTolerance, wanted)) {
      return {
        smallest: ritz.smallest,
        largest: ritz.largest,
        iterations: step + 1,
        converged: true,
      };
    }
    if (step + 1 === stepsMax && options.whenUnconverged === 'estimate')
      return {
        smallest: ritz.smallest,
        largest: ritz.largest,
        iterations: stepsMax,
        converged: false,
      };
    scale(1 / beta, w);
    q = w;
  }
  throw new LinalgError(
    'E_LINALG_NOT_CONVERGED',
    `Lanczos did not reach relative tolerance ${relativeTolerance} in ${stepsMax} steps`,
  );
}

/**
 * As extremeEigenvalues, for an operator known to be positive semidefinite: a smallest eigenvalue
 * at or below rounding level (dim * eps * largest, the accuracy any backward-stable method has;
 * negative values there come from rounding in the products) is reported as exactly 0, so that a
 * rank-deficient Gram matrix is recognized as such. A clearly negative one is an error.
 */
export function semidefiniteExtremeEigenvalues(
  apply: SymmetricOperator,
  dim: number,
  options: LanczosOptions = {},
): ExtremeEigenvalues {
  const result = extremeEigenvalues(apply, dim, options);
  const roundingLevel = dim * EPSILON * Math.abs(result.largest);
  if (result.smallest < -SEMIDEFINITE_SLACK * Math.abs(result.largest)) {
    throw new LinalgError(
      'E_LINALG_NOT_POSITIVE_DEFINITE',
      `an operator said to be semidefinite has eigenvalue ${result.smallest}`,
    );
  }
  const smallest = result.smallest <= roundingLevel ? 0 : result.smallest;
  return { ...result, smallest };
}
