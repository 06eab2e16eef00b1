// The constants a convergence analysis is stated in, for f = sum_i p_i f_i at its minimizer x*:
// smoothness L and strong convexity mu of f and of every f_i, the condition number, the
// heterogeneity sum_i p_i ||grad f_i(x*)||^2 (zero exactly when x* minimizes every f_i), and how
// far each client's own minimizer lies from x*.
//
// They come in two parts. The global ones (L, mu, condition number, heterogeneity) cost a few
// Lanczos steps and one gradient per client, and every run reports them. The Hessian at x* and the
// per-client ones (L_i, mu_i, x_i*) cost a solve per client; only the theory report asks for them.

import type { Objective } from '../problem/objective.js';
import { hessianExtremeEigenvalues } from '../problem/hessian-spectrum.js';
import { assertLength } from '../problem/problem-error.js';
import { WeightedSumObjective } from '../problem/weighted-sum.js';
import { distanceSquared, norm2 } from '../vec/kernels.js';
import type { OracleOptions } from './oracle-certificate.js';
import { ownMinimizer } from './own-minimizer.js';

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

export interface GlobalConstants {
  /** L of f: exact for least squares, a bound for logistic and softmax */
  smoothness: number;
  /** mu of f: exact for least squares, a bound for logistic and softmax */
  strongConvexity: number;
  /** smoothness / strongConvexity (Infinity when mu = 0) */
  conditionNumber: number;
  /** sum_i p_i ||grad f_i(x*)||^2 */
  heterogeneity: number;
}

export interface CurvatureAtOptimum {
  smallest: number;
  largest: number;
  /** false: Lanczos reached its step cap first, and the two are estimates (see spectrum.ts) */
  converged: boolean;
}

/**
 * Curvature at x* of a non-quadratic objective is reported, never used in a bound: it is asked to
 * 1e-10 relative within 300 products and, past them, shown as an estimate. Measured: a softmax of
 * 7,850 dimensions on 10,000 digits, whose Hessian's bottom is a large cluster at lambda, had
 * not reached 1e-13 after 1,000 products (minutes), which used to stop `roundwire theory`.
 */
const CURVATURE_LANCZOS = {
  relativeTolerance: 1e-10,
  iterationsMax: 300,
  whenUnconverged: 'estimate',
} as const;

export interface ProblemConstants extends GlobalConstants {
  /** extreme eigenvalues of the Hessian of f at x* (for least squares, equal to mu and L) */
  hessianAtOptimum: CurvatureAtOptimum;
  /** in the order of the objectives given */
  clients: ClientConstants[];
}

/** L, mu, the condition number and the heterogeneity of `global` at its minimizer. */
export function globalConstants(
  global: WeightedSumObjective,
  optimum: Float64Array,
): GlobalConstants {
  assertLength('optimum', optimum, global.dim);
  const smoothness = global.smoothnessBound();
  const strongConvexity = global.strongConvexityBound();
  const gradient = new Float64Array(global.dim);
  let heterogeneity = 0;
  for (let i = 0; i < global.components.length; i++) {
    global.components[i].gradient(optimum, gradient);
    const norm = norm2(gradient);
    heterogeneity += global.weights[i] * norm * norm;
  }
  return {
    smoothness,
    strongConvexity,
    conditionNumber: strongConvexity > 0 ? smoothness / strongConvexity : Infinity,
    heterogeneity,
  };
}

/**
 * Extreme Hessian eigenvalues at x*: for least squares the Hessian is constant and they are the
 * exact L and mu already known; otherwise Lanczos on the Hessian operator at x*.
 */
export function curvatureAtOptimum(global: Objective, optimum: Float64Array): CurvatureAtOptimum {
  if (global.kind === 'least-squares')
    return {
      smallest: global.strongConvexityBound(),
      largest: global.smoothnessBound(),
      converged: true,
    };
  const { smallest, largest, converged } = hessianExtremeEigenvalues(
    global,
    optimum,
    CURVATURE_LANCZOS,
  );
  return { smallest, largest, converged };
}

/** One client's constants against the global minimizer. */
export function clientConstants(
  client: Objective,
  optimum: Float64Array,
  options: OracleOptions = {},
): ClientConstants {
  assertLength('optimum', optimum, client.dim);
  const gradient = new Float64Array(client.dim);
  client.gradient(optimum, gradient);
  const minimizer = ownMinimizer(client, options);
  return {
    smoothness: client.smoothnessBound(),
    strongConvexity: client.strongConvexityBound(),
    gradientNormAtOptimum: norm2(gradient),
    minimizerDistance: minimizer === null ? null : Math.sqrt(distanceSquared(minimizer, optimum)),
  };
}

/**
 * Every constant of f = sum_i p_i f_i given its minimizer (from solveOptimum), each client's own
 * minimizer solved with the same oracle options.
 */
export function computeConstants(
  clients: readonly Objective[],
  weights: ArrayLike<number>,
  optimum: Float64Array,
  options: OracleOptions = {},
): ProblemConstants {
  const global = new WeightedSumObjective(clients, weights);
  return {
    ...globalConstants(global, optimum),
    hessianAtOptimum: curvatureAtOptimum(global, optimum),
    clients: clients.map((client) => clientConstants(client, optimum, options)),
  };
}
