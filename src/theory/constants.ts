// The constants a convergence analysis is stated in, for f = sum_i p_i f_i at its minimizer x*:
// smoothness L and strong convexity mu of f and of every f_i, the condition number, the
// heterogeneity sum_i p_i ||grad f_i(x*)||^2 (zero exactly when x* minimizes every f_i), and how
// far each client's own minimizer lies from x*.

import type { Objective } from '../problem/objective.js';
import { ProblemError, assertLength } from '../problem/problem-error.js';
import { WeightedSumObjective } from '../problem/weighted-sum.js';
import { distanceSquared, norm2 } from '../vec/kernels.js';
import { solveOptimum, type OracleOptions } from './oracle.js';
import { LinalgError } from '../linalg/linalg-error.js';
import { hessianExtremeEigenvalues } from '../problem/hessian-spectrum.js';

export interface ClientConstants {
  /** L_i: the client's smoothness bound (exact for least squares) */
  smoothness: number;
  /** mu_i: the client's strong-convexity bound (exact for least squares) */
  strongConvexity: number;
  /** ||grad f_i(x*)|| */
  gradientNormAtOptimum: number;
  /** ||x_i* - x*||; null when f_i is not strongly convex (mu_i = 0), so x_i* need not be unique */
  minimizerDistance: number | null;
}

export interface ProblemConstants {
  /** L of f: exact for least squares, a bound for logistic and softmax */
  smoothness: number;
  /** mu of f: exact for least squares, a bound for logistic and softmax */
  strongConvexity: number;
  /** smoothness / strongConvexity (Infinity when mu = 0) */
  conditionNumber: number;
  /** extreme eigenvalues of the Hessian of f at x* (for least squares, equal to mu and L) */
  hessianAtOptimum: { smallest: number; largest: number };
  /** sum_i p_i ||grad f_i(x*)||^2 */
  heterogeneity: number;
  /** in the order of the objectives given */
  clients: ClientConstants[];
}

/**
 * The client's own minimizer, or null when its Hessian is singular to working precision (a mu_i
 * that is positive only by rounding): x_i* is then not determined.
 */
function ownMinimizer(client: Objective, options: OracleOptions): Float64Array | null {
  try {
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

/**
 * Constants of f = sum_i p_i f_i given its minimizer (from solveOptimum). Each client's own
 * minimizer is solved here as well, with the same oracle options.
 */
export function computeConstants(
  clients: readonly Objective[],
  weights: ArrayLike<number>,
  optimum: Float64Array,
  options: OracleOptions = {},
): ProblemConstants {
  const global = new WeightedSumObjective(clients, weights);
  assertLength('optimum', optimum, global.dim);
  const smoothness = global.smoothnessBound();
  const strongConvexity = global.strongConvexityBound();
  const curvature = hessianExtremeEigenvalues(global, optimum);

  const gradient = new Float64Array(global.dim);
  let heterogeneity = 0;
  const perClient: ClientConstants[] = [];
  for (let i = 0; i < clients.length; i++) {
    const client = clients[i];
    client.gradient(optimum, gradient);
    const gradientNormAtOptimum = norm2(gradient);
    heterogeneity += global.weights[i] * gradientNormAtOptimum * gradientNormAtOptimum;
    const clientStrongConvexity = client.strongConvexityBound();
    const minimizer = clientStrongConvexity > 0 ? ownMinimizer(client, options) : null;
    const minimizerDistance =
      minimizer === null ? null : Math.sqrt(distanceSquared(minimizer, optimum));
    perClient.push({
      smoothness: client.smoothnessBound(),
      strongConvexity: clientStrongConvexity,
      gradientNormAtOptimum,
      minimizerDistance,
    });
  }
  return {
    smoothness,
    strongConvexity,
    conditionNumber: strongConvexity > 0 ? smoothness / strongConvexity : Infinity,
    hessianAtOptimum: { smallest: curvature.smallest, largest: curvature.largest },
    heterogeneity,
    clients: perClient,
  };
}
