// The asymptotic rate of an affine round map T(s) = M s + b: the spectral radius rho(M), read
// from applications of T only. Every error s - s* evolves as M^k (s_0 - s*), so ||s_k - s*||
// shrinks like rho^k (Gelfand's formula, rho = lim ||M^k||^(1/k)) and f(x_k) - f*, quadratic in
// the error, like rho^(2k) once the limit is x* itself.
//
// Conserved quantities. A state flattened whole often holds quantities a round never changes
// (SCAFFOLD's c - sum_i p_i c_i, a stored initial model): M has the eigenvalue 1 along them, but
// the error s_k - s* has no part there, since the run keeps the start's values. The rate that
// matters is rho of M on the range of I - M, the directions that move. So the starting vectors
// are (I - M) times random ones, and each vector is cleaned the same way whenever rounding may
// have let a conserved part grow (see DRIFT_LOG_MAX). Without conserved quantities I - M is
// invertible and the range is everything: nothing changes but a few extra products.
//
// How rho is read. The plain power iteration's growth over a window, (||M^(k+w) v|| / ||M^k v||)^(1/w),
// is Gelfand's formula in practice, but M is not symmetric: when its dominant eigenvalues are a
// complex pair r e^(+-i theta) (or a real pair +-r), M^k v turns inside the dominant plane and its
// norm carries a bounded oscillating factor, so the window estimate converges only like 1/w.
// Hence the iteration runs on two vectors at once (orthogonal iteration; Golub and Van Loan,
// Matrix Computations, 4th ed., section 7.3.2) with Rayleigh-Ritz on their span: the first
// vector is exactly the power iterate, whose Rayleigh quotient converges to a dominant real
// eigenvalue, and the span converges to the dominant plane, whose 2x2 projection has the
// dominant pair as eigenvalues. Of the two estimates, the one whose residual ||M Q - Q H|| is
// smaller is the one whose subspace is invariant; it is accepted once that residual is at the
// tolerance (the eigenvalue error of a Ritz value is of the order of its residual) and the
// estimate has stayed within the tolerance over a window of iterations. If neither converges
// (three or more eigenvalues share the largest modulus, or a defective one), the result is the
// window growth over the second half of the run and is flagged as not converged.

import { Rng } from '../data/rng.js';
import { axpy, dot, norm2, scale } from '../vec/kernels.js';
import { linearPart, type LinearOperator, type RoundMap } from './affine-map.js';
import { TheoryError } from './theory-error.js';

export interface PredictRateOptions {
  /** iterations at most; each applies the round map twice (default 2000) */
  iterationsMax?: number;
  /** relative accuracy wanted for the spectral radius (default 1e-8) */
  tolerance?: number;
  /** iterations over which the estimate must stay within the tolerance (default 10) */
  window?: number;
  /** seed of the starting vectors (default fixed, so that predictions repeat) */
  seed?: number;
  /** see linearPart */
  probeNorm?: number;
}

/** Which estimate the spectral radius comes from. */
export type DominantKind =
  /** one real eigenvalue of largest modulus: the power iterate's Rayleigh quotient */
  | 'real'
  /** a complex-conjugate pair or a +-r pair: the 2x2 Ritz projection */
  | 'pair'
  /** neither converged: Gelfand's window growth */
  | 'growth';

export interface RatePrediction {
  /** rho(M) on the range of I - M: the per-round contraction of the state's error */
  spectralRadius: number;
  /** rho^2, the per-round contraction of f(x) - f* when the limit is x* */
  perRoundRate: number;
  iterations: number;
  /** round-map applications, including the one at the base state and the cleaning products */
  mapApplications: number;
  converged: boolean;
  dominant: DominantKind;
  /** ||M Q - Q H|| of the accepted estimate, relative to the spectral radius */
  relativeResidual: number;
}

const DEFAULT_ITERATIONS_MAX = 2000;
const DEFAULT_TOLERANCE = 1e-8;
const DEFAULT_WINDOW = 10;
const DEFAULT_SEED = 0x0a7e;
/**
 * The residual cannot fall below the rounding of the products, a few ulps of (1 + ||M||) (see
 * linearPart); 64 ulps leaves room for the accumulation over a dimension of thousands.
 */
const RESIDUAL_ROUNDING = 64 * Number.EPSILON;
/** Below this fraction of its norm, the second image lies in the first's direction: M has rank <= 1 there. */
const COLLAPSE_RATIO = 1e-12;
/** Fresh random directions tried for the second vector before concluding that only one direction moves. */
const FRESH_ATTEMPTS_MAX = 4;
/**
 * Rounding puts parts of size eps along the conserved directions into every product; they keep
 * their size while a contracting iterate is renormalized, so they grow by 1/growth per step
 * relative to it. Once that growth reaches 1e6 (parts of ~1e-10), the vector is cleaned by one
 * more product with I - M. Cleaning scales each eigencomponent by |1 - lambda|, which costs about
 * rho / (1 - rho) steps of re-convergence, against ln(1e6) / (1 - rho) steps between cleanings.
 */
const DRIFT_LOG_MAX = Math.log(1e6);

/** Largest modulus of the eigenvalues of [[a, b], [c, d]]. */
function largestModulus2x2(a: number, b: number, c: number, d: number): number {
  const mid = 0.5 * (a + d);
  const halfDifference = 0.5 * (a - d);
  const discriminant = halfDifference * halfDifference + b * c;
  // Real roots mid +- sqrt(disc); complex ones mid +- i sqrt(-disc), of modulus sqrt(mid^2 - disc).
  return discriminant >= 0 ? Math.abs(mid) + Math.sqrt(discriminant) : Math.sqrt(mid * mid - discriminant);
}

function randomUnit(rng: Rng, dim: number): Float64Array {
  const v = new Float64Array(dim);
  for (;;) {
    for (let j = 0; j < dim; j++) v[j] = rng.normal();
    const length = norm2(v);
    if (length > 0) {
      scale(1 / length, v);
      return v;
    }
  }
}

/** v minus its component along the unit vector u, twice (one pass leaves eps * cond errors). */
function orthogonalizeAgainst(v: Float64Array, u: Float64Array): void {
  axpy(-dot(u, v), u, v);
  axpy(-dot(u, v), u, v);
}

/**
 * The unit vector along `candidate` minus its part along the unit vector u, with the length
 * that part left; if `candidate` lies along u, fresh vectors from `fresh` are tried instead, and
 * if they all do too, the space `fresh` draws from is the line of u itself: null.
 */
function orthonormalPartner(
  candidate: Float64Array,
  u: Float64Array,
  fresh: () => Float64Array,
): { vector: Float64Array; length: number } | null {
  const v = Float64Array.from(candidate);
  let reference = norm2(v);
  orthogonalizeAgainst(v, u);
  let length = norm2(v);
  for (let attempt = 0; !(length > COLLAPSE_RATIO * reference); attempt++) {
    if (attempt === FRESH_ATTEMPTS_MAX) return null;
    v.set(fresh());
    reference = norm2(v);
    orthogonalizeAgainst(v, u);
    length = norm2(v);
  }
  scale(1 / length, v);
  return { vector: v, length };
}

/** ||w - alpha q1 - beta q2||^2 */
function residualSquared(w: Float64Array, q1: Float64Array, alpha: number, q2: Float64Array | null, beta: number): number {
  let sum = 0;
  for (let j = 0; j < w.length; j++) {
    const r = w[j] - alpha * q1[j] - (q2 === null ? 0 : beta * q2[j]);
    sum += r * r;
  }
  return sum;
}

/** rho = 0: M vanishes on every direction that moves (or nothing moves at all). */
function nothingMoves(iterations: number): Omit<RatePrediction, 'mapApplications'> {
  return { spectralRadius: 0, perRoundRate: 0, iterations, converged: true, dominant: 'real', relativeResidual: 0 };
}

function checkOptions(iterationsMax: number, tolerance: number, window: number): void {
  if (!Number.isInteger(iterationsMax) || iterationsMax < 1) {
    throw new TheoryError('E_ARGUMENT', `iterationsMax must be a positive integer, got ${iterationsMax}`);
  }
  if (!(tolerance > 0) || !(tolerance < 1)) {
    throw new TheoryError('E_ARGUMENT', `tolerance must be in (0, 1), got ${tolerance}`);
  }
  if (!Number.isInteger(window) || window < 1) {
    throw new TheoryError('E_ARGUMENT', `window must be a positive integer, got ${window}`);
  }
}

/** Spectral radius of the linear operator M on R^dim, on the range of I - M; see the file comment. */
export function estimateSpectralRadius(
  apply: LinearOperator,
  dim: number,
  options: PredictRateOptions = {},
): Omit<RatePrediction, 'mapApplications'> {
  const iterationsMax = options.iterationsMax ?? DEFAULT_ITERATIONS_MAX;
  const tolerance = options.tolerance ?? DEFAULT_TOLERANCE;
  const window = options.window ?? DEFAULT_WINDOW;
  checkOptions(iterationsMax, tolerance, window);
  if (!Number.isInteger(dim) || dim < 1) throw new TheoryError('E_DIMENSION', `dimension must be a positive integer, got ${dim}`);

  const rng = Rng.fromSeed(options.seed ?? DEFAULT_SEED);
  // (I - M) v: no part along the eigenvalue 1, i.e. along the quantities the round conserves.
  const moving = (v: Float64Array): Float64Array => {
    const image = apply(v);
    for (let j = 0; j < dim; j++) image[j] = v[j] - image[j];
    return image;
  };
  const freshMoving = (): Float64Array => moving(randomUnit(rng, dim));
  const firstStart = freshMoving();
  const firstLength = norm2(firstStart);
  // M = I on a random vector: every direction is conserved.
  if (!(firstLength > COLLAPSE_RATIO)) return nothingMoves(0);
  let q1: Float64Array = Float64Array.from(firstStart);
  scale(1 / firstLength, q1);
  // In one dimension, or when only one direction moves, the power iterate alone does it.
  let q2 = dim >= 2 ? (orthonormalPartner(freshMoving(), q1, freshMoving)?.vector ?? null) : null;
  const estimates: number[] = [];
  const logGrowths: number[] = [];
  let normEstimate = 0;
  let best = { estimate: 0, residual: Infinity, kind: 'real' as DominantKind };
  // How much a part along a conserved direction (which keeps its size while the iterate is
  // renormalized) has grown relative to each vector since that vector was last cleaned.
  let driftLog1 = 0;
  let driftLog2 = 0;

  /**
   * A unit vector along `v`, or along a fresh moving direction when `v` is (numerically) zero;
   * null when no fresh direction moves either.
   */
  const unitOrFresh = (v: Float64Array): Float64Array | null => {
    let length = norm2(v);
    for (let attempt = 0; !(length > COLLAPSE_RATIO); attempt++) {
      if (attempt === FRESH_ATTEMPTS_MAX) return null;
      v = freshMoving();
      length = norm2(v);
    }
    scale(1 / length, v);
    return v;
  };

  for (let iteration = 1; iteration <= iterationsMax; iteration++) {
    const w1 = apply(q1);
    const w2 = q2 === null ? null : apply(q2);
    const growth = norm2(w1);
    const growth2 = w2 === null ? 0 : norm2(w2);
    normEstimate = Math.max(normEstimate, growth, growth2);
    // An image at the rounding of the products (see linearPart) is zero: M vanishes on the
    // moving vectors it was given (random ones, or M^k of them), so it is nilpotent there.
    const roundingLevel = RESIDUAL_ROUNDING * (1 + normEstimate);
    if (growth <= roundingLevel && growth2 <= roundingLevel) return nothingMoves(iteration);
    logGrowths.push(Math.log(Math.max(growth, roundingLevel)));

    const h11 = dot(q1, w1);
    const real = { estimate: Math.abs(h11), residual: Math.sqrt(residualSquared(w1, q1, h11, null, 0)), kind: 'real' as DominantKind };
    let pair = { estimate: Infinity, residual: Infinity, kind: 'pair' as DominantKind };
    if (q2 !== null && w2 !== null) {
      const h12 = dot(q1, w2);
      const h21 = dot(q2, w1);
      const h22 = dot(q2, w2);
      pair = {
        estimate: largestModulus2x2(h11, h12, h21, h22),
        residual: Math.sqrt(residualSquared(w1, q1, h11, q2, h21) + residualSquared(w2, q1, h12, q2, h22)),
        kind: 'pair',
      };
    }
    const accurate = (candidate: typeof real) =>
      candidate.residual <= Math.max(tolerance * candidate.estimate, RESIDUAL_ROUNDING * (1 + normEstimate));
    // Of two accurate estimates the larger is the dominant one (the other may be an eigenvalue
    // that the power iterate happened to sit on); otherwise the less wrong one is tracked.
    let current: typeof real;
    if (accurate(real) && accurate(pair)) current = real.estimate >= pair.estimate ? real : pair;
    else if (accurate(real) || accurate(pair)) current = accurate(real) ? real : pair;
    else current = real.residual <= pair.residual ? real : pair;
    estimates.push(current.estimate);
    if (current.residual <= best.residual) best = current;

    const earlier = estimates.length > window ? estimates[estimates.length - 1 - window] : NaN;
    const stable = Math.abs(current.estimate - earlier) <= tolerance * current.estimate;
    if (accurate(current) && stable) {
      return {
        spectralRadius: current.estimate,
        perRoundRate: current.estimate * current.estimate,
        iterations: iteration,
        converged: true,
        dominant: current.kind,
        relativeResidual: current.estimate > 0 ? current.residual / current.estimate : 0,
      };
    }

    // If q1's image vanished, the iteration carries on from q2's.
    const leadsFromFirst = growth > roundingLevel;
    const lead = leadsFromFirst ? w1 : (w2 as Float64Array);
    const leadGrowth = leadsFromFirst ? growth : growth2;
    let next1 = unitOrFresh(Float64Array.from(lead));
    driftLog1 -= Math.log(leadGrowth);
    if (next1 !== null && driftLog1 > DRIFT_LOG_MAX) {
      next1 = unitOrFresh(moving(next1));
      driftLog1 = 0;
    }
    if (next1 === null) return nothingMoves(iteration);
    if (q2 !== null) {
      const partner = orthonormalPartner(leadsFromFirst && w2 !== null ? w2 : freshMoving(), next1, freshMoving);
      q2 = partner?.vector ?? null;
      if (partner !== null) driftLog2 -= Math.log(partner.length);
      if (q2 !== null && driftLog2 > DRIFT_LOG_MAX) {
        q2 = orthonormalPartner(moving(q2), next1, freshMoving)?.vector ?? null;
        driftLog2 = 0;
      }
    }
    q1 = next1;
  }

  // Gelfand's formula over the second half of the run: the start's transient is behind it.
  const half = logGrowths.slice(Math.floor(logGrowths.length / 2));
  const growthEstimate = Math.exp(half.reduce((sum, g) => sum + g, 0) / half.length);
  return {
    spectralRadius: growthEstimate,
    perRoundRate: growthEstimate * growthEstimate,
    iterations: iterationsMax,
    converged: false,
    dominant: 'growth',
    relativeResidual: growthEstimate > 0 ? best.residual / growthEstimate : Infinity,
  };
}

/**
 * The predicted asymptotic rate of the method whose round is `map`, from its linear part around
 * `initialState` (any state will do for an affine map; the initial one sets the rounding scale).
 * `converged: false` means the estimate did not settle within iterationsMax: report it as such.
 */
export function predictRate(map: RoundMap, initialState: Float64Array, options: PredictRateOptions = {}): RatePrediction {
  let applications = 1;
  const linear = linearPart(map, initialState, options.probeNorm === undefined ? {} : { probeNorm: options.probeNorm });
  const counted: LinearOperator = (v) => {
    applications++;
    return linear(v);
  };
  const estimate = estimateSpectralRadius(counted, initialState.length, options);
  return { ...estimate, mapApplications: applications };
}
