// The stationary noise floor of minibatch gradient descent on least squares, in closed form.
//
// The round: every client i draws a batch B_i of b_i of its n_i samples, uniformly without
// replacement and independently of the other clients and of earlier rounds, and the server
// steps x+ = x - gamma sum_i p_i g_i(x) with g_i the batch's mean gradient (ridge included) and
// gamma = eta_g eta. With e = x - x*, H_B = sum_i p_i H_{B_i} and g_B = sum_i p_i g_{B_i}(x*):
//   e+ = (I - gamma H_B) e - gamma g_B,   E[H_B] = H (the global Hessian),   E[g_B] = grad f(x*) = 0.
// The mean obeys E[e+] = (I - gamma H) E[e] and dies out whenever the second moment below is
// stable (E[e] E[e]^T <= P, so a bounded P bounds the mean, and the mean's map is linear). Because the batch is drawn afresh and independently of e, the
// second moment P = E[e e^T] follows
//   P+ = E[A_B P A_B^T] + gamma^2 E[g_B g_B^T] - gamma (E[A_B m g_B^T] + its transpose),
// with A_B = I - gamma H_B and m = E[e]; the cross terms vanish with m, so the stationary P solves
//   P = A P A^T + gamma^2 sum_i p_i^2 Cov_i(H_{B_i} P H_{B_i}) + gamma^2 sum_i p_i^2 Cov_i(g_{B_i}),
// A = I - gamma H, a generalized Lyapunov equation, and the floor is E[f - f*] = tr(H P) / 2
// (f - f* = e^T H e / 2 for the objective of least-squares.ts).
//
// The batch covariances (derived here; it is the finite-population correction of simple random
// sampling, Cochran, Sampling Techniques, 3rd ed., ch. 2, applied to matrix-valued samples).
// A batch is an indicator vector z with sum_s z_s = b; E[z_s] = b/n and
//   Cov(z_s, z_t) = b (n - b) / (n^2 (n - 1)) (n [s = t] - 1).
// For the batch mean (1/b) sum_s z_s y_s of samples y_s (linear in y, so matrices y_s = D_s =
// a_s a_s^T and vectors y_s = u_s = a_s (a_s . x* - t_s) alike), with c = (n - b) / (b n (n - 1)):
//   Cov((1/b) sum z_s D_s P (1/b) sum z_t D_t) = c (sum_s D_s P D_s - n Dbar P Dbar),
//   Cov((1/b) sum z_s u_s) = c (sum_s u_s u_s^T - n ubar ubar^T),
// bar the mean over the shard's samples; c = 0 when the batch is the whole shard.
//
// The solve: P is vectorized row-major (P_{jk} at j d + k) and (I - M) vec P = gamma^2 vec Q is
// solved by LU, M the linear map above. M is a positive map (it is E[A_B . A_B^T]), so its
// spectral radius is below one exactly when X - M(X) = I has a positive definite solution X:
// if rho(M) < 1, X = sum_k M^k(I) >= I; conversely M(X) = X - I <= (1 - 1/lambda_max(X)) X gives
// M^k(X) <= (1 - 1/lambda_max(X))^k X. That second solve, with a Cholesky factorization of X as
// the test, is the check of mean-square stability; without it the floor is refused.

import { choleskyFactor } from '../linalg/cholesky.js';
import { LinalgError } from '../linalg/linalg-error.js';
import { luFactor, luSolve } from '../linalg/lu.js';
import { TheoryError, assertTheoryLength } from './theory-error.js';

/**
 * Largest model dimension for the closed form: the vectorized system is d^2 x d^2, at d = 32 a
 * 1024 x 1024 LU (about 3.6e8 flops and 8 MiB).
 */
export const MINIBATCH_FLOOR_DIMENSION_MAX = 32;
/** Largest (total samples) x d^4: forming sum_s D_s (x) D_s costs that many multiply-adds. */
export const MINIBATCH_FLOOR_SAMPLE_WORK_MAX = 2 ** 28;

/** One client's data as the closed form needs it. */
export interface MinibatchShard {
  /** n x d, row-major */
  features: Float64Array;
  /** n targets */
  targets: Float64Array;
  sampleCount: number;
  /** b_i, at most n_i */
  batchSize: number;
  /** p_i */
  weight: number;
}

export interface MinibatchFloorInput {
  dim: number;
  shards: readonly MinibatchShard[];
  /** lambda of the ridge term */
  regularization: number;
  /** x* of f = sum_i p_i f_i */
  optimum: Float64Array;
  /** gamma = eta_g eta, the step the server's model takes along sum_i p_i g_i */
  stepSize: number;
}

export interface MinibatchFloor {
  /** E[f - f*] in the stationary regime: tr(H P) / 2 */
  floor: number;
  /** the stationary P = E[e e^T], d x d row-major */
  covariance: Float64Array;
}

/** Why the closed form does not fit the sizes, or null. */
export function minibatchFloorSizeBlocker(dim: number, totalSamples: number): string | null {
  if (dim > MINIBATCH_FLOOR_DIMENSION_MAX)
    return `dimension ${dim} is above the closed form's limit of ${MINIBATCH_FLOOR_DIMENSION_MAX}`;
  if (totalSamples * dim ** 4 > MINIBATCH_FLOOR_SAMPLE_WORK_MAX)
    return `${totalSamples} samples at dimension ${dim} need ${totalSamples * dim ** 4} multiply-adds, above the closed form's limit of ${MINIBATCH_FLOOR_SAMPLE_WORK_MAX}`;
  return null;
}

/** c = (n - b) / (b n (n - 1)): the finite-population factor of a batch mean's covariance. */
export function batchCovarianceFactor(sampleCount: number, batchSize: number): number {
  const n = sampleCount;
  const b = Math.min(batchSize, n);
  if (b === n) return 0;
  return (n - b) / (b * n * (n - 1));
}

function checkInput(input: MinibatchFloorInput): void {
  const { dim: d, shards } = input;
  assertTheoryLength('optimum', input.optimum, d);
  if (!(input.stepSize > 0) || !(input.regularization >= 0))
    throw new TheoryError(
      'E_THEORY_ARGUMENT',
      `the closed form needs a positive step size and a non-negative ridge, got ${input.stepSize} and ${input.regularization}`,
    );
  let total = 0;
  for (const shard of shards) {
    assertTheoryLength('features', shard.features, shard.sampleCount * d);
    assertTheoryLength('targets', shard.targets, shard.sampleCount);
    if (!(shard.batchSize >= 1) || !(shard.weight >= 0))
      throw new TheoryError(
        'E_THEORY_ARGUMENT',
        `a shard needs a batch size >= 1 and a weight >= 0, got ${shard.batchSize} and ${shard.weight}`,
      );
    total += shard.sampleCount;
  }
  const blocker = minibatchFloorSizeBlocker(d, total);
  if (blocker !== null) throw new TheoryError('E_THEORY_SIZE_LIMIT', blocker);
}

/** The global Hessian H = sum_i p_i (A_i^T A_i / n_i) + lambda I, d x d. */
function globalHessian(input: MinibatchFloorInput): Float64Array {
  const d = input.dim;
  const h = new Float64Array(d * d);
  for (const shard of input.shards) {
    const scale = shard.weight / shard.sampleCount;
    for (let s = 0; s < shard.sampleCount; s++) {
      const a = shard.features.subarray(s * d, s * d + d);
      for (let j = 0; j < d; j++) for (let k = 0; k < d; k++) h[j * d + k] += scale * a[j] * a[k];
    }
  }
  for (let j = 0; j < d; j++) h[j * d + j] += input.regularization;
  return h;
}

/**
 * The d^2 x d^2 matrix of vec P -> A P A^T + gamma^2 sum_i p_i^2 c_i (sum_s D_s P D_s - n_i
 * Dbar_i P Dbar_i), and gamma^2 vec Q, row-major vectorization. Entry ((j,k),(l,m)) of
 * vec(X P Y) is X_jl Y_mk.
 */
function lyapunovSystem(
  input: MinibatchFloorInput,
  hessian: Float64Array,
): { map: Float64Array; noise: Float64Array } {
  const d = input.dim;
  const dd = d * d;
  const gamma = input.stepSize;
  const a = new Float64Array(dd);
  for (let j = 0; j < d; j++)
    for (let k = 0; k < d; k++) a[j * d + k] = (j === k ? 1 : 0) - gamma * hessian[j * d + k];
  const map = new Float64Array(dd * dd);
  const addKron = (x: Float64Array, y: Float64Array, factor: number) => {
    for (let j = 0; j < d; j++)
      for (let k = 0; k < d; k++) {
        const row = (j * d + k) * dd;
        for (let l = 0; l < d; l++) {
          const xjl = factor * x[j * d + l];
          if (xjl === 0) continue;
          for (let m = 0; m < d; m++) map[row + l * d + m] += xjl * y[m * d + k];
        }
      }
  };
  addKron(a, a, 1);
  const noise = new Float64Array(dd);
  const outer = new Float64Array(dd);
  const mean = new Float64Array(dd);
  const residualMean = new Float64Array(d);
  for (const shard of input.shards) {
    const n = shard.sampleCount;
    const c = batchCovarianceFactor(n, shard.batchSize);
    if (c === 0 || shard.weight === 0) continue;
    const factor = gamma * gamma * shard.weight * shard.weight * c;
    mean.fill(0);
    residualMean.fill(0);
    for (let s = 0; s < n; s++) {
      const row = shard.features.subarray(s * d, s * d + d);
      let residual = -shard.targets[s];
      for (let j = 0; j < d; j++) residual += row[j] * input.optimum[j];
      for (let j = 0; j < d; j++) {
        residualMean[j] += (row[j] * residual) / n;
        for (let k = 0; k < d; k++) {
          outer[j * d + k] = row[j] * row[k];
          mean[j * d + k] += outer[j * d + k] / n;
          noise[j * d + k] += factor * row[j] * residual * row[k] * residual;
        }
      }
      addKron(outer, outer, factor);
    }
    addKron(mean, mean, -factor * n);
    for (let j = 0; j < d; j++)
      for (let k = 0; k < d; k++)
        noise[j * d + k] -= factor * n * residualMean[j] * residualMean[k];
  }
  return { map, noise };
}

/**
 * The stationary floor of minibatch gradient descent (the model above). Throws
 * E_THEORY_SIZE_LIMIT past the limits, E_THEORY_SINGULAR when the second moment is not
 * mean-square stable (no stationary floor exists: the noise grows without bound).
 */
export function minibatchGdFloor(input: MinibatchFloorInput): MinibatchFloor {
  checkInput(input);
  const d = input.dim;
  const dd = d * d;
  const hessian = globalHessian(input);
  const { map, noise } = lyapunovSystem(input, hessian);
  const system = new Float64Array(dd * dd);
  for (let r = 0; r < dd; r++)
    for (let c = 0; c < dd; c++) system[r * dd + c] = (r === c ? 1 : 0) - map[r * dd + c];
  const unstable = (detail: string) =>
    new TheoryError(
      'E_THEORY_SINGULAR',
      `minibatch gradient descent is not mean-square stable at step size ${input.stepSize}: ${detail}`,
    );
  let factors;
  try {
    factors = luFactor(system, dd);
  } catch (error) {
    if (error instanceof LinalgError) throw unstable(error.message);
    throw error;
  }
  const identity = new Float64Array(dd);
  for (let j = 0; j < d; j++) identity[j * d + j] = 1;
  const certificate = new Float64Array(dd);
  luSolve(factors, identity, certificate);
  try {
    choleskyFactor(symmetrized(certificate, d), d);
  } catch (error) {
    if (error instanceof LinalgError)
      throw unstable('X - M(X) = I has no positive definite solution');
    throw error;
  }
  const covariance = new Float64Array(dd);
  luSolve(factors, noise, covariance);
  const p = symmetrized(covariance, d);
  let trace = 0;
  for (let j = 0; j < d; j++)
    for (let k = 0; k < d; k++) trace += hessian[j * d + k] * p[k * d + j];
  return { floor: Math.max(0, trace / 2), covariance: p };
}

/** (X + X^T) / 2: the solves keep symmetry only up to rounding. */
function symmetrized(x: Float64Array, d: number): Float64Array {
  const out = new Float64Array(d * d);
  for (let j = 0; j < d; j++)
    for (let k = 0; k < d; k++) out[j * d + k] = 0.5 * (x[j * d + k] + x[k * d + j]);
  return out;
}
