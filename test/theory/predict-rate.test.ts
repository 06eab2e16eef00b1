import { EigenvalueDecomposition, Matrix } from 'ml-matrix';
import { describe, expect, it } from 'vitest';
import { gd } from '../../src/algorithm/gd.js';
import { scaffold } from '../../src/algorithm/scaffold.js';
import { Rng } from '../../src/base/rng.js';
import { predictRate } from '../../src/theory/predict-rate.js';
import { standardProblem } from '../algorithm/fixtures/least-squares-problem.js';
import {
  matrixMap,
  modelRoundMap,
  randomArray,
  randomMatrix,
  referenceSpectrum,
  scaffoldStateMap,
  similarTo,
} from './fixtures/affine-maps.js';

// Spectral radii are compared with ml-matrix's EigenvalueDecomposition to 1e-6 relative, the
// accuracy the predictions are reported with; the estimator runs at its default tolerance 1e-8.
const RADIUS_TOLERANCE = 1e-6;

const relativeError = (value: number, reference: number) =>
  Math.abs(value - reference) / Math.abs(reference);

describe('predictRate', () => {
  it('matches max |lambda| of random non-symmetric matrices (ml-matrix EVD), real or complex dominant', () => {
    const kinds = new Set<string>();
    for (let seed = 1; seed <= 12; seed++) {
      const rng = Rng.fromSeed(seed);
      const n = 3 + (seed % 10);
      const a = randomMatrix(rng, n);
      const reference = referenceSpectrum(a);
      const prediction = predictRate(
        matrixMap(a, randomArray(rng, n)),
        Float64Array.from(randomArray(rng, n)),
      );
      expect(prediction.converged).toBe(true);
      expect(relativeError(prediction.spectralRadius, reference.spectralRadius)).toBeLessThan(
        RADIUS_TOLERANCE,
      );
      expect(prediction.perRoundRate).toBe(prediction.spectralRadius ** 2);
      kinds.add(reference.dominantImaginary === 0 ? 'real' : 'complex');
    }
    // The seeds cover both cases, so both branches of the estimator are exercised.
    expect([...kinds].sort()).toEqual(['complex', 'real']);
  });

  it('reads a complex dominant pair, where ||M^k v|| oscillates, as a complex Ritz pair', () => {
    const rng = Rng.fromSeed(21);
    // Eigenvalues 0.9 +- 0.3i (modulus sqrt(0.9) = 0.9487), then 0.8 and -0.5 +- 0.5i, 0.3.
    const a = similarTo(
      rng,
      [
        [0.9, 0.3],
        [-0.5, 0.5],
      ],
      [0.8, 0.3],
    );
    const reference = referenceSpectrum(a);
    expect(reference.dominantImaginary).not.toBe(0);
    const prediction = predictRate(matrixMap(a, randomArray(rng, 6)), new Float64Array(6));
    expect(prediction.dominant).toBe('pair');
    expect(prediction.converged).toBe(true);
    expect(relativeError(prediction.spectralRadius, reference.spectralRadius)).toBeLessThan(
      RADIUS_TOLERANCE,
    );
  });

  it('reads a real +-r pair (no single dominant eigenvalue): either one gives rho', () => {
    const rng = Rng.fromSeed(22);
    const a = similarTo(rng, [], [0.9, -0.9, 0.5, -0.2]);
    const prediction = predictRate(matrixMap(a, randomArray(rng, 4)), new Float64Array(4));
    expect(prediction.converged).toBe(true);
    expect(
      relativeError(prediction.spectralRadius, referenceSpectrum(a).spectralRadius),
    ).toBeLessThan(RADIUS_TOLERANCE);
  });

  it('reads a dominant real eigenvalue beside a complex pair of nearly equal modulus', () => {
    const rng = Rng.fromSeed(23);
    // |0.6 +- 0.6i| = 0.8485 = |-0.8485|: no 2-plane is invariant-dominant, only the first vector converges.
    const second = Math.hypot(0.6, 0.6);
    const a = similarTo(rng, [[0.6, 0.6]], [0.95, -second, 0.1]);
    const prediction = predictRate(matrixMap(a, randomArray(rng, 5)), new Float64Array(5));
    expect(prediction.dominant).toBe('real');
    expect(
      relativeError(prediction.spectralRadius, referenceSpectrum(a).spectralRadius),
    ).toBeLessThan(RADIUS_TOLERANCE);
  });

  it('predicts the gd rate on least squares: max_i (1 - eta lambda_i)^2 over the Hessian eigenvalues (ml-matrix EVD)', () => {
    const problem = standardProblem();
    const m = problem.objectives.length;
    let hessian = Matrix.zeros(problem.dim, problem.dim);
    problem.objectives.forEach(
      (objective, i) => (hessian = hessian.add(objective.hessian().mul(problem.weights[i]))),
    );
    const eigenvalues = new EigenvalueDecomposition(hessian).realEigenvalues;
    // eta = 1/L: the slowest mode is mu's; eta = 1.9/L: L's mode (|1 - 1.9| = 0.9) can win instead.
    for (const factor of [1, 1.9]) {
      const eta = factor / problem.smoothness;
      const map = modelRoundMap(
        gd,
        problem,
        { localSteps: Array(m).fill(1), stepSizes: Array(m).fill(eta) },
        { stepSize: eta },
      );
      const expected = Math.max(...eigenvalues.map((lambda) => (1 - eta * lambda) ** 2));
      const prediction = predictRate(map, new Float64Array(problem.dim));
      expect(prediction.converged).toBe(true);
      // 1e-4 relative: the brief's acceptance level; the estimate is typically far closer.
      expect(relativeError(prediction.perRoundRate, expected)).toBeLessThan(1e-4);
    }
  });

  it('counts its round-map applications: one at the base, one per Arnoldi step, plus the filtering products', () => {
    const rng = Rng.fromSeed(24);
    let applications = 0;
    const map = matrixMap(randomMatrix(rng, 5), randomArray(rng, 5));
    const prediction = predictRate((s) => {
      applications++;
      return map(s);
    }, new Float64Array(5));
    expect(prediction.mapApplications).toBe(applications);
    expect(applications).toBeGreaterThanOrEqual(1 + prediction.iterations + 1);
  });

  it('gives 0 for a map that forgets its input and 1-D maps exactly', () => {
    const constant = predictRate((s) => new Float64Array(s.length).fill(3), new Float64Array(4));
    expect(constant.spectralRadius).toBe(0);
    expect(constant.converged).toBe(true);
    const scalar = predictRate((s) => Float64Array.of(-0.75 * s[0] + 1), Float64Array.of(2));
    expect(scalar.spectralRadius).toBeCloseTo(0.75, 14);
  });

  it('flags a run cut short by mapApplicationsMax as not converged, within that budget', () => {
    const rng = Rng.fromSeed(25);
    // Eigenvalues 0.99, 0.985, 0.98, 0.2: three Arnoldi steps cannot resolve the cluster.
    const a = similarTo(rng, [], [0.99, 0.985, 0.98, 0.2]);
    let applications = 0;
    const map = matrixMap(a, randomArray(rng, 4));
    const prediction = predictRate(
      (s) => {
        applications++;
        return map(s);
      },
      new Float64Array(4),
      { mapApplicationsMax: 5 },
    );
    expect(prediction.converged).toBe(false);
    expect(prediction.dominant).toBe('unsettled');
    expect(prediction.mapApplications).toBe(5);
    expect(applications).toBe(5);
    expect(prediction.iterations).toBe(3);
  });

  it('rejects bad options with E_ARGUMENT', () => {
    const map = (s: Float64Array) => Float64Array.from(s);
    for (const options of [
      { tolerance: 0 },
      { tolerance: 1 },
      { mapApplicationsMax: 2 },
      { mapApplicationsMax: 10.5 },
      { krylovDimension: 0 },
    ]) {
      // predictRate checks its own options; Arnoldi (src/linalg) checks the Krylov ones.
      expect(() => predictRate(map, new Float64Array(2), options)).toThrow(
        expect.objectContaining({ code: expect.stringMatching(/^E_(LINALG|THEORY)_ARGUMENT$/) }),
      );
    }
  });
});

describe('predictRate with conserved quantities (M has the eigenvalue 1)', () => {
  it('gives rho on the directions that move: the largest |lambda| other than the 1s (ml-matrix EVD)', () => {
    const rng = Rng.fromSeed(26);
    // Eigenvalues 1, 1 (conserved), 0.7 +- 0.4i (modulus 0.806), 0.5, -0.3.
    const a = similarTo(rng, [[0.7, 0.4]], [1, 1, 0.5, -0.3]);
    const evd = new EigenvalueDecomposition(a);
    const moving = evd.realEigenvalues
      .map((re, k) => Math.hypot(re, evd.imaginaryEigenvalues[k]))
      .filter(
        (_, k) => Math.abs(evd.realEigenvalues[k] - 1) > 1e-9 || evd.imaginaryEigenvalues[k] !== 0,
      );
    const prediction = predictRate(
      matrixMap(a, randomArray(rng, 6)),
      Float64Array.from(randomArray(rng, 6)),
    );
    expect(prediction.converged).toBe(true);
    expect(relativeError(prediction.spectralRadius, Math.max(...moving))).toBeLessThan(
      RADIUS_TOLERANCE,
    );
  });

  it("reads SCAFFOLD's rate on its whole flattened state as on a state without the conserved part", () => {
    const problem = standardProblem();
    const m = problem.objectives.length;
    const d = problem.dim;
    const plan = { localSteps: [2, 3, 4, 5], stepSizes: Array(m).fill(1 / problem.smoothness) };
    const full = scaffoldStateMap(scaffold, problem, plan);
    // The reduced state [x, c_1..c_m] with c = sum_i p_i c_i has no conserved quantity; its M,
    // assembled column by column here and decomposed by ml-matrix, is the reference.
    const reduced = (state: Float64Array): Float64Array => {
      const expanded = new Float64Array((m + 2) * d);
      expanded.set(state.subarray(0, d), 0);
      expanded.set(state.subarray(d), 2 * d);
      for (let i = 0; i < m; i++)
        for (let j = 0; j < d; j++) expanded[d + j] += problem.weights[i] * state[(1 + i) * d + j];
      const image = full(expanded);
      const out = new Float64Array((m + 1) * d);
      out.set(image.subarray(0, d), 0);
      out.set(image.subarray(2 * d), d);
      return out;
    };
    const n = (m + 1) * d;
    const offset = reduced(new Float64Array(n));
    const columns = Array.from({ length: n }, (_, j) => {
      const unit = new Float64Array(n);
      unit[j] = 1;
      return Array.from(reduced(unit), (value, i) => value - offset[i]);
    });
    const reference = referenceSpectrum(new Matrix(columns).transpose());
    const prediction = predictRate(full, new Float64Array((m + 2) * d));
    expect(prediction.converged).toBe(true);
    expect(relativeError(prediction.spectralRadius, reference.spectralRadius)).toBeLessThan(
      RADIUS_TOLERANCE,
    );
  });

  it('gives 0 when every direction that moves is wiped out in one round', () => {
    // s -> ((s_0 + s_1) / 2) (1, 1): eigenvalue 1 along (1, 1) (the mean), 0 along (1, -1).
    const averaging = (s: Float64Array) =>
      Float64Array.of(0.5 * (s[0] + s[1]), 0.5 * (s[0] + s[1]));
    expect(predictRate(averaging, Float64Array.of(1, 3)).spectralRadius).toBeLessThan(1e-12);
  });
});
