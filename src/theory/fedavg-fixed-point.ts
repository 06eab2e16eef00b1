// The limit of FedAvg with full gradients on quadratic clients, in closed form (the fixed-point
// analysis of Pathak and Wainwright, "FedSplit", NeurIPS 2020, section 3, here with client
// weights p_i, client step sizes eta_i and local step counts tau_i). Derivation, for
//   f_i(y) = (1/2) y^T H_i y - h_i^T y   (ridge folded into H_i, so h_i = -grad f_i(0)):
// one local step is y <- y - eta_i (H_i y - h_i) = A_i y + eta_i h_i with A_i = I - eta_i H_i, so
// after tau_i steps from x
//   y_i - x = (A_i^tau_i - I) x + eta_i S_i h_i,   S_i = sum_{k < tau_i} A_i^k,
// and since I - A_i^tau_i = (I - A_i) S_i = eta_i H_i S_i this is y_i - x = -eta_i S_i grad f_i(x).
// The server step x <- x + eta_g sum_i p_i (y_i - x) (any eta_g != 0) stands still exactly when
//   (sum_i p_i M_i) x = sum_i p_i u_i,   M_i = I - A_i^tau_i,   u_i = eta_i S_i h_i,
// where u_i is simply the client's output after tau_i steps from y = 0. When H_i is invertible,
// u_i = M_i H_i^{-1} h_i = M_i x_i*, which is Pathak and Wainwright's form
// x_fa = (sum p_i M_i)^{-1} sum p_i M_i x_i*; the form above needs no H_i^{-1}, so clients with
// fewer samples than features and no ridge are fine. M_i is a polynomial in H_i, so every M_i is
// symmetric and their weighted sum is nonsingular whenever sum_i p_i H_i is positive definite and
// every eta_i is below 2 / L_i; it is solved by LU regardless, so that larger steps still work.
//
// A_i^tau_i and u_i come together by repeated squaring of the affine step (A, c): composing
// (A2, c2) after (A1, c1) gives (A2 A1, A2 c1 + c2), so tau_i steps cost O(dim^3 log tau_i).

import type { Objective } from '../problem/objective.js';
import { allFinite } from '../vec/kernels.js';
import { assembleHessian } from './dense-oracle.js';
import { luFactor, luSolve } from '../linalg/lu.js';
import { TheoryError, assertTheoryLength } from './theory-error.js';

export interface QuadraticClient {
  /** H_i, dim x dim, row-major */
  hessian: Float64Array;
  /** h_i = -grad f_i(0) */
  linear: Float64Array;
  /** p_i (any nonnegative scale: the fixed point does not depend on it) */
  weight: number;
  /** eta_i, after the step policy (eta, or eta / tau_i) */
  stepSize: number;
  /** tau_i */
  localSteps: number;
}

/** The quadratic form (H, h) of a least-squares objective, from Hessian-vector products at 0. */
export function leastSquaresQuadratic(objective: Objective): {
  hessian: Float64Array;
  linear: Float64Array;
} {
  if (objective.kind !== 'least-squares') {
    throw new TheoryError(
      'E_THEORY_ARGUMENT',
      `the FedAvg closed form holds for quadratics only, not for ${objective.kind}`,
    );
  }
  const origin = new Float64Array(objective.dim);
  const hessian = assembleHessian(objective, origin);
  const linear = new Float64Array(objective.dim);
  objective.gradient(origin, linear);
  for (let j = 0; j < linear.length; j++) linear[j] = -linear[j];
  return { hessian, linear };
}

/** a b for row-major n x n matrices, as a new matrix. */
function multiply(a: Float64Array, b: Float64Array, n: number): Float64Array {
  const out = new Float64Array(n * n);
  for (let i = 0; i < n; i++) {
    const rowI = i * n;
    for (let k = 0; k < n; k++) {
      const aik = a[rowI + k];
      if (aik === 0) continue;
      const rowK = k * n;
      for (let j = 0; j < n; j++) out[rowI + j] += aik * b[rowK + j];
    }
  }
  return out;
}

/** a v + c for a row-major n x n matrix, as a new vector. */
function multiplyAdd(a: Float64Array, v: Float64Array, c: Float64Array, n: number): Float64Array {
  const out = new Float64Array(n);
  for (let i = 0; i < n; i++) {
    let sum = c[i];
    for (let j = 0; j < n; j++) sum += a[i * n + j] * v[j];
    out[i] = sum;
  }
  return out;
}

interface AffineStep {
  /** the linear part, n x n row-major */
  matrix: Float64Array;
  /** the offset */
  offset: Float64Array;
}

/** `outer` after `inner`: y -> A_o (A_i y + c_i) + c_o. */
function compose(outer: AffineStep, inner: AffineStep, n: number): AffineStep {
  return {
    matrix: multiply(outer.matrix, inner.matrix, n),
    offset: multiplyAdd(outer.matrix, inner.offset, outer.offset, n),
  };
}

/** (A^tau, eta S h): tau local gradient steps as one affine map, by repeated squaring. */
function localSteps(client: QuadraticClient, n: number): AffineStep {
  const matrix = new Float64Array(n * n);
  const offset = new Float64Array(n);
  for (let i = 0; i < n; i++) {
    for (let j = 0; j < n; j++)
      matrix[i * n + j] = (i === j ? 1 : 0) - client.stepSize * client.hessian[i * n + j];
    offset[i] = client.stepSize * client.linear[i];
  }
  let power: AffineStep = { matrix, offset };
  let result: AffineStep | null = null;
  // All steps are the same map, so the order of composition does not matter.
  for (let remaining = client.localSteps; remaining > 0; remaining = Math.floor(remaining / 2)) {
    if (remaining % 2 === 1) result = result === null ? power : compose(power, result, n);
    if (remaining > 1) power = compose(power, power, n);
  }
  return result as AffineStep;
}

function checkClient(client: QuadraticClient, index: number, n: number): void {
  assertTheoryLength(`H of client ${index}`, client.hessian, n * n);
  assertTheoryLength(`h of client ${index}`, client.linear, n);
  if (!allFinite(client.hessian) || !allFinite(client.linear)) {
    throw new TheoryError(
      'E_THEORY_NOT_FINITE',
      `client ${index} has a non-finite entry in H or h`,
    );
  }
  if (!(client.weight >= 0) || !Number.isFinite(client.weight)) {
    throw new TheoryError(
      'E_THEORY_ARGUMENT',
      `client ${index} has weight ${client.weight}; weights must be finite and >= 0`,
    );
  }
  if (!(client.stepSize > 0) || !Number.isFinite(client.stepSize)) {
    throw new TheoryError(
      'E_THEORY_ARGUMENT',
      `client ${index} has step size ${client.stepSize}; it must be positive and finite`,
    );
  }
  if (!Number.isInteger(client.localSteps) || client.localSteps < 1) {
    throw new TheoryError(
      'E_THEORY_ARGUMENT',
      `client ${index} has ${client.localSteps} local steps; it needs an integer >= 1`,
    );
  }
}

/**
 * FedAvg's limit x_fa on quadratic clients with full gradients (see the file comment). Throws
 * E_SINGULAR when sum_i p_i M_i is singular (no unique limit), E_ARGUMENT when every weight is 0.
 */
export function fedavgFixedPoint(clients: readonly QuadraticClient[], dim: number): Float64Array {
  if (!Number.isInteger(dim) || dim < 1)
    throw new TheoryError('E_THEORY_DIMENSION', `dimension must be a positive integer, got ${dim}`);
  if (clients.length === 0)
    throw new TheoryError('E_THEORY_ARGUMENT', 'the FedAvg fixed point needs at least one client');
  clients.forEach((client, i) => checkClient(client, i, dim));
  const weightTotal = clients.reduce((sum, client) => sum + client.weight, 0);
  if (!(weightTotal > 0)) throw new TheoryError('E_THEORY_ARGUMENT', 'the client weights sum to 0');

  const lhs = new Float64Array(dim * dim);
  const rhs = new Float64Array(dim);
  for (const client of clients) {
    if (client.weight === 0) continue;
    // Normalized weights keep the system at the scale of M_i, whatever scale p_i comes in.
    const p = client.weight / weightTotal;
    const steps = localSteps(client, dim);
    for (let i = 0; i < dim; i++) {
      for (let j = 0; j < dim; j++)
        lhs[i * dim + j] += p * ((i === j ? 1 : 0) - steps.matrix[i * dim + j]);
      rhs[i] += p * steps.offset[i];
    }
  }
  const factors = luFactor(lhs, dim);
  const model = new Float64Array(dim);
  luSolve(factors, rhs, model);
  // One step of iterative refinement on the assembled system.
  const residual = new Float64Array(dim);
  for (let i = 0; i < dim; i++) {
    let sum = rhs[i];
    for (let j = 0; j < dim; j++) sum -= lhs[i * dim + j] * model[j];
    residual[i] = sum;
  }
  const correction = new Float64Array(dim);
  luSolve(factors, residual, correction);
  for (let i = 0; i < dim; i++) model[i] += correction[i];
  return model;
}
