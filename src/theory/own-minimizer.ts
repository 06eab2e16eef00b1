// A client's own minimizer x_i*, for the heterogeneity measures: null when f_i is not strongly
// convex (mu_i = 0) or its Hessian is singular to working precision, since x_i* is then not
// determined. Otherwise the oracle solves f_i like any objective, except least squares with fewer
// samples than features above the dense crossover: there x_i* = A^T y lies in the row space of
// the data, with (A A^T / n + lambda I) y = b / n (the push-through identity
// (A^T A + n lambda I)^{-1} A^T = A^T (A A^T + n lambda I)^{-1}), an n x n system instead of p x p.
// Its certificate is the same: ||grad f_i(x)|| recomputed from the data, at or below the tolerance.

import { LeastSquaresObjective } from '../problem/least-squares.js';
import { ROW_GRAM_SAMPLES_MAX } from '../problem/gram-spectrum.js';
import type { Objective } from '../problem/objective.js';
import { ProblemError } from '../problem/problem-error.js';
import { axpy, matTVec, matVec, norm2, scale } from '../vec/kernels.js';
import { LinalgError } from '../linalg/linalg-error.js';
import { choleskyFactor, choleskySolve } from '../linalg/cholesky.js';
import { conjugateGradient } from '../linalg/conjugate-gradient.js';
import type { SymmetricOperator } from '../linalg/spectrum.js';
import { DENSE_DIMENSION_FASTER_MAX, solveOptimum } from './oracle.js';
import { notCertified, type OracleOptions } from './oracle-certificate.js';

const DEFAULT_GRADIENT_TOLERANCE = 1e-10;
const DEFAULT_ITERATIONS_MAX = 100;
/**
 * The dual system's factor when it is small enough to form (ROW_GRAM_SAMPLES_MAX: forming wins
 * while CG would need more than n / 4 steps), else CG on u -> A (A^T u) / n + lambda u.
 */
function dualSolver(
  client: LeastSquaresObjective,
  dualTolerance: number,
): (rhs: Float64Array, out: Float64Array) => void {
  const { sampleCount: n, featureCount: p, features } = client.shard;
  const lambda = client.regularization;
  if (n <= ROW_GRAM_SAMPLES_MAX) {
    const gram = client.rowGram();
    for (let r = 0; r < n; r++) gram[r * n + r] += lambda;
    const factor = choleskyFactor(gram, n);
    return (rhs, out) => choleskySolve(factor, n, rhs, out);
  }
  const lifted = new Float64Array(p);
  const apply: SymmetricOperator = (u, out) => {
    matTVec(features, n, p, u, lifted);
    matVec(features, n, p, lifted, out);
    scale(1 / n, out);
    axpy(lambda, u, out);
  };
  return (rhs, out) => {
    out.set(
      conjugateGradient(apply, rhs, { relativeTolerance: 1e-13, absoluteTolerance: dualTolerance })
        .solution,
    );
  };
}

/** x_i* = A^T y with y refined against the dual residual until the primal gradient certifies. */
function dualLeastSquaresMinimizer(
  client: LeastSquaresObjective,
  tolerance: number,
  iterationsMax: number,
): Float64Array {
  const { sampleCount: n, featureCount: p, features, targets } = client.shard;
  const lambda = client.regularization;
  // grad f(A^T y) = A^T r with r = (A A^T y - b) / n + lambda y, and ||A|| = sqrt(n lambda_max).
  const dataNorm = Math.sqrt(n * Math.max(client.smoothnessBound() - lambda, Number.MIN_VALUE));
  const solve = dualSolver(client, tolerance / (4 * dataNorm));
  const y = new Float64Array(n);
  const x = new Float64Array(p);
  const residual = new Float64Array(n);
  const correction = new Float64Array(n);
  const gradient = new Float64Array(p);
  for (let s = 0; s < n; s++) residual[s] = -targets[s] / n;
  client.gradient(x, gradient);
  let gradientNorm = norm2(gradient);
  let iterations = 0;
  while (gradientNorm > tolerance && iterations < iterationsMax) {
    solve(residual, correction);
    axpy(-1, correction, y);
    iterations++;
    matTVec(features, n, p, y, x);
    matVec(features, n, p, x, residual);
    for (let s = 0; s < n; s++) residual[s] = (residual[s] - targets[s]) / n + lambda * y[s];
    client.gradient(x, gradient);
    const previousNorm = gradientNorm;
    gradientNorm = norm2(gradient);
    if (iterations >= 2 && gradientNorm >= 0.5 * previousNorm) break;
  }
  if (!(gradientNorm <= tolerance))
    throw notCertified(gradientNorm, tolerance, iterations, 'dual refinement stalled');
  return x;
}

export function ownMinimizer(client: Objective, options: OracleOptions = {}): Float64Array | null {
  if (!(client.strongConvexityBound() > 0)) return null;
  try {
    if (
      client instanceof LeastSquaresObjective &&
      client.sampleCount < client.dim &&
      client.dim > DENSE_DIMENSION_FASTER_MAX
    ) {
      return dualLeastSquaresMinimizer(
        client,
        options.gradientTolerance ?? DEFAULT_GRADIENT_TOLERANCE,
        options.iterationsMax ?? DEFAULT_ITERATIONS_MAX,
      );
    }
    return solveOptimum(client, options).x;
  } catch (error) {
    // Cholesky refuses the Hessian itself (least squares) or Newton's shifts give up (smooth losses).
    if (error instanceof LinalgError && error.code === 'E_LINALG_NOT_POSITIVE_DEFINITE')
      return null;
    if (error instanceof ProblemError && error.code === 'E_PROBLEM_NOT_POSITIVE_DEFINITE')
      return null;
    throw error;
  }
}
