// GMRES (Saad and Schultz, SIAM J. Sci. Stat. Comput. 7(3), 1986; Saad, Iterative Methods for
// Sparse Linear Systems, 2nd ed., Alg. 6.9 with Givens rotations) for A d = r with A known only
// through products, from d = 0. The fixed points of round maps need it for A = I - M: every
// product is one round, so a solver that needs only as many rounds as the spectrum demands beats
// assembling M column by column. It also copes with a singular A, as long as r lies in its range
// and its null space meets the range only in 0 (index 1): the iterates stay in the Krylov space
// of r, inside the range, so the solution has no part along the null space (Brown and Walker,
// "GMRES on (nearly) singular systems", SIAM J. Matrix Anal. Appl. 18(1), 1997). For I - M that
// null space holds the quantities a round conserves, and the solution is the one the iteration
// itself reaches.

import { axpy, dot, norm2 } from '../vec/kernels.js';
import type { LinearOperator } from './linear-operator.js';
import { LinalgError, assertLinalgLength } from './linalg-error.js';

export interface GmresOptions {
  /** Arnoldi steps at most, i.e. products with A (default: the dimension) */
  iterationsMax?: number;
  /** stop once the least-squares residual is at most this times ||r|| (default 1e-10) ... */
  relativeTolerance?: number;
  /**
   * ... or at most this (default 0). A caller whose r carries rounding along A's null space sets
   * it at that rounding level: below it the solve would chase the part of r it cannot reach.
   */
  absoluteTolerance?: number;
}

export interface GmresResult {
  solution: Float64Array;
  /** ||r - A d|| as the rotations track it (the caller recomputes it when it matters) */
  residualNorm: number;
  /** products with A */
  products: number;
  /**
   * true when the Krylov space stopped growing (an invariant subspace) or A is singular on it:
   * the solution is then the best the space holds, exact if r lies in A's range
   */
  exhausted: boolean;
}

const DEFAULT_RELATIVE_TOLERANCE = 1e-10;
/**
 * A new Arnoldi vector or pivot below this times ||A|| (the largest Hessenberg entry so far)
 * ends the solve: the space is (nearly) invariant. Going on would normalize what is mostly the
 * rounding of the products into the next basis vector; on a singular A that noise has parts
 * along the null space, which the residual cannot see and the solution would pick up. Callers
 * that need more accuracy refine against the residual and solve again (fixed-point.ts does).
 */
const BREAKDOWN_RATIO = 1e-10;

/** d with A d = r to the tolerance, or the least-squares best in the space built when it stops short. */
export function gmres(
  apply: LinearOperator,
  rhs: Float64Array,
  options: GmresOptions = {},
): GmresResult {
  const dim = rhs.length;
  const iterationsMax = options.iterationsMax ?? dim;
  const relativeTolerance = options.relativeTolerance ?? DEFAULT_RELATIVE_TOLERANCE;
  if (!Number.isInteger(iterationsMax) || iterationsMax < 1) {
    throw new LinalgError(
      'E_LINALG_ARGUMENT',
      `iterationsMax must be a positive integer, got ${iterationsMax}`,
    );
  }
  const absoluteTolerance = options.absoluteTolerance ?? 0;
  if (!(relativeTolerance > 0))
    throw new LinalgError(
      'E_LINALG_ARGUMENT',
      `relativeTolerance must be positive, got ${relativeTolerance}`,
    );
  if (!(absoluteTolerance >= 0))
    throw new LinalgError(
      'E_LINALG_ARGUMENT',
      `absoluteTolerance must be >= 0, got ${absoluteTolerance}`,
    );
  const solution = new Float64Array(dim);
  const beta = norm2(rhs);
  const target = Math.max(relativeTolerance * beta, absoluteTolerance);
  if (beta <= target) return { solution, residualNorm: beta, products: 0, exhausted: false };

  const first = Float64Array.from(rhs);
  for (let j = 0; j < dim; j++) first[j] /= beta;
  const basis: Float64Array[] = [first];
  /** columns of the rotated Hessenberg matrix: column k has k + 1 entries (upper triangular) */
  const columns: Float64Array[] = [];
  const cosines: number[] = [];
  const sines: number[] = [];
  const projected = [beta];
  let residualNorm = beta;
  let exhausted = false;
  let products = 0;
  let operatorNorm = 0;

  while (columns.length < iterationsMax) {
    const k = columns.length;
    const w = apply(basis[k]);
    products++;
    assertLinalgLength('operator output', w, dim);
    const h = new Float64Array(k + 2);
    // Modified Gram-Schmidt, twice: one pass loses orthogonality like eps * cond (Parlett, section 6.9).
    for (let pass = 0; pass < 2; pass++) {
      for (let i = 0; i <= k; i++) {
        const c = dot(basis[i], w);
        h[i] += c;
        axpy(-c, basis[i], w);
      }
    }
    const subdiagonal = norm2(w);
    h[k + 1] = subdiagonal;
    for (let i = 0; i <= k + 1; i++) operatorNorm = Math.max(operatorNorm, Math.abs(h[i]));
    for (let i = 0; i < k; i++) {
      const rotated = cosines[i] * h[i] + sines[i] * h[i + 1];
      h[i + 1] = -sines[i] * h[i] + cosines[i] * h[i + 1];
      h[i] = rotated;
    }
    const pivot = Math.hypot(h[k], h[k + 1]);
    if (!(pivot > BREAKDOWN_RATIO * operatorNorm)) {
      // A maps the new direction into the span already built: singular on this space. Keep the
      // columns so far; their least-squares solution is the best the space offers.
      exhausted = true;
      break;
    }
    cosines.push(h[k] / pivot);
    sines.push(h[k + 1] / pivot);
    h[k] = pivot;
    projected.push(-sines[k] * projected[k]);
    projected[k] *= cosines[k];
    columns.push(h.subarray(0, k + 1));
    residualNorm = Math.abs(projected[k + 1]);
    if (residualNorm <= target) break;
    if (subdiagonal <= BREAKDOWN_RATIO * operatorNorm) {
      exhausted = true;
      break;
    }
    for (let j = 0; j < dim; j++) w[j] /= subdiagonal;
    basis.push(w);
  }

  // Back substitution R y = g, then d = V y.
  const m = columns.length;
  const y = new Float64Array(m);
  for (let i = m - 1; i >= 0; i--) {
    let sum = projected[i];
    for (let j = i + 1; j < m; j++) sum -= columns[j][i] * y[j];
    y[i] = sum / columns[i][i];
  }
  for (let i = 0; i < m; i++) axpy(y[i], basis[i], solution);
  return { solution, residualNorm, products, exhausted };
}
