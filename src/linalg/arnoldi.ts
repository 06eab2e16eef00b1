// The eigenvalue of largest modulus of a linear operator known only through products, by the
// explicitly restarted Arnoldi iteration (Saad, Numerical Methods for Large Eigenvalue Problems,
// 2nd ed., SIAM 2011, sections 6.2 and 6.4.1; Golub and Van Loan, Matrix Computations, 4th ed.,
// section 10.5). Each cycle builds an orthonormal Krylov basis V of at most krylovDimension
// vectors with modified Gram-Schmidt and one reorthogonalization pass, so that M V_j = V_j H_j +
// h_{j+1,j} v_{j+1} e_j^T holds to rounding; the eigenvalues of the small Hessenberg matrix H_j
// (ml-matrix's EigenvalueDecomposition) are the Ritz values, and the Ritz pair (theta, V y) has
// the residual ||M V y - theta V y|| = |h_{j+1,j}| |e_j^T y| for a unit y, read after every step
// at no cost in products. A cycle ends when the dominant Ritz pair's residual is below
// tolerance * |theta| (or the rounding of the products), or when the basis is full; the next
// cycle starts from the dominant Ritz vector.
//
// Restarting from one vector rather than keeping several Ritz vectors (thick restart) is chosen
// so that the restart vector can be filtered (below). A complex pair theta, conj(theta) with Ritz
// vector V (y_re + i y_im) restarts from V (y_re + y_im): that real vector is
// ((1 - i) z + (1 + i) conj(z)) / 2 for z = V (y_re + i y_im), so it carries both eigenvectors of
// the pair with equal weight, and it cannot vanish (y_re + y_im = 0 would make z a multiple of a
// real vector, whose eigenvalue would be real).
//
// Conserved quantities (movingOnly). A flattened state often holds quantities a round never
// changes; M has the eigenvalue 1 along them, but the error of a run has no part there (see
// predict-rate.ts), so the eigenvalue wanted is the dominant one on the range of I - M. That
// range is invariant under M, so a start (I - M) x keeps every Krylov vector in it but for
// rounding. Rounding does put parts of a few ulps along the conserved directions into every
// product, and a Krylov space amplifies them as it resolves the moving directions around them, so
// over several cycles a Ritz value at 1 would surface. Hence every restart vector is multiplied by
// I - M once more (one product per cycle), which starts each cycle as clean as the first; and a
// converged Ritz value equal to 1 within its residual is a conserved direction and is never taken
// as the dominant one. The multiplication also scales each moving eigencomponent by |1 - lambda|,
// which costs the dominant one at most a factor (1 + rho) / (1 - rho) against the others: a few
// steps of the next cycle.
//
// The subdominant eigenvalue. The Ritz values of the final Krylov space also estimate the next
// eigenvalue: the largest modulus among the Ritz values that are not the dominant one, its
// conjugate (never listed twice) or, for a dominant real r, its partner -r (a +-r pair has one
// modulus and is one mode for the rate). Ritz values converge from the outside of the spectrum
// inwards, so when the dominant pair has converged the next one has usually been separated too,
// but less well: its residual is reported beside it, and it bounds the error of that Ritz value
// (for a normal M; times the eigenvector's condition number otherwise). It is a by-product of the
// dominant's iteration, never iterated to a tolerance of its own.

import { EigenvalueDecomposition, Matrix } from 'ml-matrix';
import { axpy, dot, norm2, scale } from '../vec/kernels.js';
import type { LinearOperator } from './linear-operator.js';
import { LinalgError, assertLinalgLength } from './linalg-error.js';

export interface ArnoldiOptions {
  /** basis vectors per cycle, i.e. products per cycle (default 30; at most the dimension) */
  krylovDimension?: number;
  /** products with M at most, the filtering ones included, though one step is always taken (default 2000) */
  productsMax?: number;
  /** residual wanted, relative to |lambda| (default 1e-8) */
  tolerance?: number;
  /** the dominant eigenvalue on the range of I - M; see the file comment (default false) */
  movingOnly?: boolean;
}

export interface DominantEigenvalue {
  /** the dominant Ritz value: real part, imaginary part (>= 0 of a conjugate pair) and modulus */
  real: number;
  imaginary: number;
  modulus: number;
  /** ||M x - lambda x|| for the unit Ritz vector x, from the Arnoldi relation */
  residual: number;
  converged: boolean;
  /** Arnoldi steps over all cycles (one product each) */
  steps: number;
  /** cycles begun after the first */
  restarts: number;
  /** products with M in all */
  products: number;
  /** the next eigenvalue's estimate (see the file comment), null when the space held no other */
  subdominant: SubdominantRitz | null;
}

export interface SubdominantRitz {
  /** |theta| of the subdominant Ritz value */
  modulus: number;
  /** ||M x - theta x|| for its unit Ritz vector: how far it is from an eigenpair */
  residual: number;
}

/** Basis vectors per cycle unless asked otherwise; the memory estimate counts them. */
export const DEFAULT_KRYLOV_DIMENSION = 30;
const DEFAULT_PRODUCTS_MAX = 2000;
const DEFAULT_TOLERANCE = 1e-8;
/**
 * The residual cannot fall below the rounding of the products, a few ulps of (1 + ||M||) (see
 * linearPart); 64 ulps leaves room for the accumulation over a dimension of thousands.
 */
const RESIDUAL_ROUNDING = 64 * Number.EPSILON;
/** A filtered vector below this fraction of its norm has no part that moves. */
const COLLAPSE_RATIO = 1e-12;

interface RitzPair {
  real: number;
  imaginary: number;
  modulus: number;
  residual: number;
  /** coordinates in the basis of the restart vector (y_re + y_im for a complex pair), unit length */
  coordinates: Float64Array;
}

/** Ritz pairs of the leading k x k block of the (krylov + 1) x krylov Hessenberg matrix `h`, with `next` = h_{k+1,k}. */
function ritzPairs(h: Float64Array, krylov: number, k: number, next: number): RitzPair[] {
  const block = new Matrix(k, k);
  for (let i = 0; i < k; i++) for (let j = 0; j < k; j++) block.set(i, j, h[i * krylov + j]);
  const evd = new EigenvalueDecomposition(block);
  const reals = evd.realEigenvalues;
  const imaginaries = evd.imaginaryEigenvalues;
  const vectors = evd.eigenvectorMatrix;
  const pairs: RitzPair[] = [];
  for (let q = 0; q < k; q++) {
    const imaginary = imaginaries[q];
    // ml-matrix stores a pair re +- i im (im > 0 first) as the columns q (real part) and q + 1
    // (imaginary part) of the eigenvector of re + i im; the conjugate's pair is the same one.
    if (imaginary < 0) continue;
    const coordinates = new Float64Array(k);
    let lengthSquared = 0;
    let lastSquared = 0;
    for (let i = 0; i < k; i++) {
      const re = vectors.get(i, q);
      const im = imaginary > 0 ? vectors.get(i, q + 1) : 0;
      coordinates[i] = re + im;
      lengthSquared += re * re + im * im;
      if (i === k - 1) lastSquared = re * re + im * im;
    }
    scale(1 / norm2(coordinates), coordinates);
    pairs.push({
      real: reals[q],
      imaginary,
      modulus: Math.hypot(reals[q], imaginary),
      residual: Math.abs(next) * Math.sqrt(lastSquared / lengthSquared),
      coordinates,
    });
  }
  return pairs;
}

/**
 * Ritz values closer than this (relative to the dominant modulus), beyond their residuals, count
 * as one mode: a Ritz value's error can exceed its residual by the eigenvector's condition number
 * (a few units on the test matrices), and two modes 1e-6 apart separate only after about a
 * million rounds, so for a rate they are one.
 */
const SAME_MODE_RELATIVE = 1e-6;

/**
 * The largest modulus among `pairs` other than `dominant`, its conjugate (never listed) or its
 * -r partner, told apart beyond SAME_MODE_RELATIVE, the two residuals and the rounding level.
 */
function subdominantOf(
  pairs: readonly RitzPair[],
  dominant: RitzPair,
  roundingLevel: number,
): SubdominantRitz | null {
  let best: SubdominantRitz | null = null;
  for (const pair of pairs) {
    if (pair === dominant) continue;
    const apart =
      SAME_MODE_RELATIVE * dominant.modulus + pair.residual + dominant.residual + roundingLevel;
    const partner =
      dominant.imaginary === 0 &&
      pair.imaginary === 0 &&
      Math.abs(pair.real + dominant.real) <= apart;
    if (
      partner ||
      Math.hypot(pair.real - dominant.real, pair.imaginary - dominant.imaginary) <= apart
    )
      continue;
    if (best === null || pair.modulus > best.modulus)
      best = { modulus: pair.modulus, residual: pair.residual };
  }
  return best;
}

function checkOptions(krylovDimension: number, productsMax: number, tolerance: number): void {
  if (!Number.isInteger(krylovDimension) || krylovDimension < 1) {
    throw new LinalgError(
      'E_LINALG_ARGUMENT',
      `krylovDimension must be a positive integer, got ${krylovDimension}`,
    );
  }
  if (!Number.isInteger(productsMax) || productsMax < 1) {
    throw new LinalgError(
      'E_LINALG_ARGUMENT',
      `productsMax must be a positive integer, got ${productsMax}`,
    );
  }
  if (!(tolerance > 0) || !(tolerance < 1))
    throw new LinalgError('E_LINALG_ARGUMENT', `tolerance must be in (0, 1), got ${tolerance}`);
}

/** The eigenvalue of M of largest modulus (on the range of I - M with movingOnly), from `start`; see the file comment. */
export function dominantEigenvalue(
  apply: LinearOperator,
  start: Float64Array,
  options: ArnoldiOptions = {},
): DominantEigenvalue {
  const dim = start.length;
  if (dim < 1)
    throw new LinalgError('E_LINALG_DIMENSION', 'the start vector must have length >= 1');
  const krylovDimension = options.krylovDimension ?? DEFAULT_KRYLOV_DIMENSION;
  const productsMax = options.productsMax ?? DEFAULT_PRODUCTS_MAX;
  const tolerance = options.tolerance ?? DEFAULT_TOLERANCE;
  checkOptions(krylovDimension, productsMax, tolerance);
  const movingOnly = options.movingOnly ?? false;
  const krylov = Math.min(krylovDimension, dim);

  let products = 0;
  const product = (v: Float64Array): Float64Array => {
    products++;
    const image = apply(v);
    assertLinalgLength('operator output', image, dim);
    return image;
  };
  /** (I - M) v as a new array */
  const filtered = (v: Float64Array): Float64Array => {
    const image = product(v);
    for (let j = 0; j < dim; j++) image[j] = v[j] - image[j];
    return image;
  };
  let steps = 0;
  let restarts = 0;
  let subdominant: SubdominantRitz | null = null;
  const result = (pair: Omit<RitzPair, 'coordinates'>, converged: boolean): DominantEigenvalue => ({
    real: pair.real,
    imaginary: pair.imaginary,
    modulus: pair.modulus,
    residual: pair.residual,
    converged,
    steps,
    restarts,
    products,
    subdominant,
  });
  const nothingMoves = (): DominantEigenvalue => ({
    ...result({ real: 0, imaginary: 0, modulus: 0, residual: 0 }, true),
    subdominant: null,
  });

  let first: Float64Array = Float64Array.from(start);
  const startLength = norm2(first);
  if (!(startLength > 0)) throw new LinalgError('E_LINALG_ARGUMENT', 'the start vector is zero');
  if (movingOnly) {
    first = filtered(first);
    if (!(norm2(first) > COLLAPSE_RATIO * startLength)) return nothingMoves();
  }
  scale(1 / norm2(first), first);

  const basis: Float64Array[] = [first];
  /** H, (krylov + 1) x krylov, row-major */
  const hessenberg = new Float64Array((krylov + 1) * krylov);
  let normEstimate = 0;
  let latest: RitzPair | null = null;

  for (;;) {
    for (let j = 0; j < krylov; j++) {
      // One step is always taken, so that there is an estimate to report.
      if (latest !== null && products >= productsMax) return result(latest, false);
      const w = product(basis[j]);
      steps++;
      let columnSquared = 0;
      // Modified Gram-Schmidt, twice: one pass loses orthogonality like eps * cond (Parlett,
      // The Symmetric Eigenvalue Problem, section 6.9), and a Ritz residual read from H assumes it.
      for (let pass = 0; pass < 2; pass++) {
        for (let i = 0; i <= j; i++) {
          const c = dot(basis[i], w);
          hessenberg[i * krylov + j] += c;
          axpy(-c, basis[i], w);
        }
      }
      for (let i = 0; i <= j; i++) columnSquared += hessenberg[i * krylov + j] ** 2;
      const next = norm2(w);
      hessenberg[(j + 1) * krylov + j] = next;
      normEstimate = Math.max(normEstimate, Math.sqrt(columnSquared + next * next));
      const roundingLevel = RESIDUAL_ROUNDING * (1 + normEstimate);
      const converged = (pair: RitzPair) =>
        pair.residual <= Math.max(tolerance * pair.modulus, roundingLevel);
      // A converged Ritz value at 1 within its residual is a conserved direction that rounding
      // let in: it is left out, and with it gone nothing may be left that moves.
      const candidates = ritzPairs(hessenberg, krylov, j + 1, next).filter(
        (pair) =>
          !(
            movingOnly &&
            converged(pair) &&
            Math.hypot(pair.real - 1, pair.imaginary) <= Math.max(pair.residual, roundingLevel)
          ),
      );
      if (candidates.length === 0) return nothingMoves();
      latest = candidates.reduce((best, pair) => (pair.modulus > best.modulus ? pair : best));
      subdominant = subdominantOf(candidates, latest, roundingLevel);
      // A subdiagonal at the rounding level makes every residual converged: the space is invariant.
      if (converged(latest)) return result(latest, true);
      if (j + 1 < krylov) {
        scale(1 / next, w);
        basis.push(w);
      }
    }

    if (products >= productsMax) return result(latest as RitzPair, false);
    const dominant = latest as RitzPair;
    let restart: Float64Array = new Float64Array(dim);
    for (let i = 0; i < krylov; i++) axpy(dominant.coordinates[i], basis[i], restart);
    if (movingOnly) {
      const length = norm2(restart);
      restart = filtered(restart);
      if (!(norm2(restart) > COLLAPSE_RATIO * length)) return nothingMoves();
    }
    scale(1 / norm2(restart), restart);
    basis.length = 0;
    basis.push(restart);
    hessenberg.fill(0);
    restarts++;
  }
}
