import { EigenvalueDecomposition, Matrix, solve } from 'ml-matrix';
import { describe, expect, it } from 'vitest';
import { buildAllShards, buildShard, sampleCountsOf } from '../../src/data/build-shard.js';
import { featureVariances } from '../../src/data/covariance.js';
import type { Shard } from '../../src/problem/shard.js';
import {
  CENTRE_NORM,
  clientFeatureMean,
  clientMinimizer,
  syntheticCentre,
} from '../../src/data/synthetic-models.js';
import { dot, norm2 } from '../../src/vec/kernels.js';
import { scenarioWith } from './scenario-fixture.js';

function row(shard: Shard, s: number): Float64Array {
  return shard.features.subarray(s * shard.featureCount, (s + 1) * shard.featureCount);
}

/** argmin_x ||A x - b||^2 from ml-matrix (a reference library), via the normal equations. */
function leastSquaresSolution(shard: Shard): Float64Array {
  const a = new Matrix(shard.sampleCount, shard.featureCount);
  for (let s = 0; s < shard.sampleCount; s++)
    for (let j = 0; j < shard.featureCount; j++)
      a.set(s, j, shard.features[s * shard.featureCount + j]);
  const b = Matrix.columnVector(Array.from(shard.targets));
  const at = a.transpose();
  return Float64Array.from(solve(at.mmul(a), at.mmul(b)).getColumn(0));
}

function columnMeans(shard: Shard): Float64Array {
  const means = new Float64Array(shard.featureCount);
  for (let s = 0; s < shard.sampleCount; s++)
    for (let j = 0; j < shard.featureCount; j++)
      means[j] += shard.features[s * shard.featureCount + j];
  for (let j = 0; j < shard.featureCount; j++) means[j] /= shard.sampleCount;
  return means;
}

describe('synthetic models', () => {
  it('puts the centre at norm CENTRE_NORM, reproducibly from the seed', () => {
    const x0 = syntheticCentre(3, 12);
    expect(norm2(x0)).toBeCloseTo(CENTRE_NORM, 12);
    expect(Array.from(syntheticCentre(3, 12))).toEqual(Array.from(x0));
    expect(Array.from(syntheticCentre(4, 12))).not.toEqual(Array.from(x0));
  });

  it('spreads client models around x0 by about minimizerSpread', () => {
    // u_i = g_i / sqrt(d) with g_i ~ N(0, I_d): E||u_i||^2 = 1 (chi-square mean d), so the mean of
    // ||x_i* - x0||^2 / spread^2 over m clients is 1 within 5 standard errors sqrt(2/(d m))
    // (the chi-square variance 2d).
    const d = 10;
    const m = 400;
    const spread = 0.3;
    const x0 = syntheticCentre(5, d);
    let total = 0;
    for (let i = 0; i < m; i++) {
      const xi = clientMinimizer(5, x0, spread, i);
      let squares = 0;
      for (let j = 0; j < d; j++) squares += (xi[j] - x0[j]) ** 2;
      total += squares / spread ** 2;
    }
    expect(Math.abs(total / m - 1)).toBeLessThan(5 * Math.sqrt(2 / (d * m)));
    expect(Array.from(clientMinimizer(5, x0, 0, 7))).toEqual(Array.from(x0));
  });
});

describe('least squares with a common minimizer', () => {
  const scenario = scenarioWith(
    { kind: 'least-squares', regularization: 0 },
    {
      source: 'synthetic',
      features: 6,
      samplesPerClient: [8, 30, 100],
      minimizerSpread: 0,
      noise: 0,
      conditionNumber: 20,
      covariateShift: 1,
    },
    3,
  );
  const x0 = syntheticCentre(scenario.seed, 6);

  it('gives every client targets exactly a . x0', () => {
    for (const shard of buildAllShards(scenario)) {
      let mismatches = 0;
      for (let s = 0; s < shard.sampleCount; s++)
        if (shard.targets[s] !== dot(row(shard, s), x0)) mismatches++;
      expect(mismatches).toBe(0);
    }
  });

  it('makes x0 the minimizer of every client (n_i >= p), as ml-matrix solves it', () => {
    // Consistent equations A x = A x0 with A of full column rank have the unique least-squares
    // solution x0; ml-matrix's solve of the normal equations is the reference.
    for (const shard of buildAllShards(scenario)) {
      const solution = leastSquaresSolution(shard);
      for (let j = 0; j < 6; j++) expect(solution[j]).toBeCloseTo(x0[j], 7);
    }
  });

  it('moves each client minimizer to its own x_i* when minimizerSpread > 0', () => {
    const spread = scenarioWith(
      { kind: 'least-squares', regularization: 0 },
      { source: 'synthetic', features: 6, samplesPerClient: 50, minimizerSpread: 1, noise: 0 },
      3,
    );
    for (const shard of buildAllShards(spread)) {
      const own = clientMinimizer(spread.seed, x0, 1, shard.clientId);
      const solution = leastSquaresSolution(shard);
      for (let j = 0; j < 6; j++) expect(solution[j]).toBeCloseTo(own[j], 7);
      expect(Math.sqrt(solution.reduce((s, v, j) => s + (v - x0[j]) ** 2, 0))).toBeGreaterThan(0.1);
    }
  });
});

describe('heterogeneity knobs', () => {
  it('gives the feature covariance the requested condition number', () => {
    // Sample covariance of n = 40 000 Gaussian draws: each sample eigenvalue l_j of distinct
    // population eigenvalues is asymptotically N(lambda_j, 2 lambda_j^2 / n), independently
    // (Anderson, "Asymptotic theory for principal component analysis", Ann. Math. Statist. 34,
    // 1963). Relative SE sqrt(2/n) = 0.7% each; the extreme ratio has relative SE 2/sqrt(n) = 1%;
    // tolerance 5 SE.
    const kappa = 50;
    const p = 5;
    const scenario = scenarioWith(
      { kind: 'least-squares' },
      { source: 'synthetic', features: p, samplesPerClient: 40_000, conditionNumber: kappa },
      1,
    );
    const shard = buildShard(scenario, 0);
    const means = columnMeans(shard);
    const covariance = new Matrix(p, p);
    for (let s = 0; s < shard.sampleCount; s++) {
      for (let j = 0; j < p; j++) {
        for (let k = 0; k < p; k++) {
          covariance.set(
            j,
            k,
            covariance.get(j, k) +
              (shard.features[s * p + j] - means[j]) * (shard.features[s * p + k] - means[k]),
          );
        }
      }
    }
    const eigenvalues = new EigenvalueDecomposition(covariance.div(shard.sampleCount - 1))
      .realEigenvalues;
    const ratio = Math.max(...eigenvalues) / Math.min(...eigenvalues);
    expect(Math.abs(ratio / kappa - 1)).toBeLessThan(5 * (2 / Math.sqrt(shard.sampleCount)));
    const lambda = featureVariances(p, kappa);
    const sorted = [...eigenvalues].sort((a, b) => b - a);
    for (let j = 0; j < p; j++)
      expect(Math.abs(sorted[j] / lambda[j] - 1)).toBeLessThan(
        5 * Math.sqrt(2 / shard.sampleCount),
      );
  });

  it('moves each client feature mean to covariateShift x its own normal vector', () => {
    // The sample mean of feature j has standard error sqrt(lambda_j / n_i); 5 standard errors.
    const p = 4;
    const n = 5_000;
    const shift = 2;
    const shifted = scenarioWith(
      { kind: 'least-squares' },
      {
        source: 'synthetic',
        features: p,
        samplesPerClient: n,
        covariateShift: shift,
        conditionNumber: 4,
      },
      3,
    );
    const lambda = featureVariances(p, 4);
    const means = buildAllShards(shifted).map(columnMeans);
    for (let i = 0; i < 3; i++) {
      const expected = clientFeatureMean(shifted.seed, p, shift, i);
      for (let j = 0; j < p; j++)
        expect(Math.abs(means[i][j] - expected[j])).toBeLessThan(5 * Math.sqrt(lambda[j] / n));
    }
    const spreadOfMeans = Math.hypot(...means[0].map((v, j) => v - means[1][j]));
    expect(spreadOfMeans).toBeGreaterThan(0.5);

    const centred = scenarioWith(
      { kind: 'least-squares' },
      {
        source: 'synthetic',
        features: p,
        samplesPerClient: n,
        covariateShift: 0,
        conditionNumber: 4,
      },
      3,
    );
    for (const m of buildAllShards(centred).map(columnMeans)) {
      for (let j = 0; j < p; j++) expect(Math.abs(m[j])).toBeLessThan(5 * Math.sqrt(lambda[j] / n));
    }
  });

  it('gives each client the listed number of samples (quantity skew)', () => {
    const sizes = [3, 17, 40, 9];
    const scenario = scenarioWith(
      { kind: 'least-squares' },
      { source: 'synthetic', features: 2, samplesPerClient: sizes },
      4,
    );
    expect(buildAllShards(scenario).map((s) => s.sampleCount)).toEqual(sizes);
    expect(sampleCountsOf(scenario)).toEqual(sizes);
  });

  it('adds target noise of the requested standard deviation', () => {
    // Residuals b - a . x0 are N(0, noise^2); sample variance within 5 SE = 5 noise^2 sqrt(2/n).
    const noise = 0.5;
    const n = 20_000;
    const scenario = scenarioWith(
      { kind: 'least-squares' },
      { source: 'synthetic', features: 3, samplesPerClient: n, noise },
      1,
    );
    const shard = buildShard(scenario, 0);
    const x0 = syntheticCentre(scenario.seed, 3);
    let squares = 0;
    for (let s = 0; s < n; s++) squares += (shard.targets[s] - dot(row(shard, s), x0)) ** 2;
    expect(Math.abs(squares / n - noise ** 2)).toBeLessThan(5 * noise ** 2 * Math.sqrt(2 / n));
  });

  it('keeps the features of a client whatever the problem kind or noise level', () => {
    const data = { source: 'synthetic' as const, features: 4, samplesPerClient: 30 };
    const a = buildShard(scenarioWith({ kind: 'least-squares' }, { ...data, noise: 0 }, 2), 1);
    const b = buildShard(scenarioWith({ kind: 'least-squares' }, { ...data, noise: 3 }, 2), 1);
    const c = buildShard(scenarioWith({ kind: 'logistic' }, data, 2), 1);
    expect(Array.from(b.features)).toEqual(Array.from(a.features));
    expect(Array.from(c.features)).toEqual(Array.from(a.features));
  });
});

describe('labelled synthetic data', () => {
  it('draws logistic labels in {0, 1} with P(b = 1) = sigmoid(a . x_i*)', () => {
    // Sum of independent Bernoulli(q_s): mean sum q_s, variance sum q_s (1 - q_s); 5 SE.
    const scenario = scenarioWith(
      { kind: 'logistic' },
      { source: 'synthetic', features: 5, samplesPerClient: 20_000, minimizerSpread: 0.5 },
      2,
    );
    const x0 = syntheticCentre(scenario.seed, 5);
    for (const shard of buildAllShards(scenario)) {
      const model = clientMinimizer(scenario.seed, x0, 0.5, shard.clientId);
      let ones = 0;
      let expected = 0;
      let variance = 0;
      let notBinary = 0;
      for (let s = 0; s < shard.sampleCount; s++) {
        const b = shard.targets[s];
        if (b !== 0 && b !== 1) notBinary++;
        ones += b;
        const q = 1 / (1 + Math.exp(-dot(row(shard, s), model)));
        expected += q;
        variance += q * (1 - q);
      }
      expect(notBinary).toBe(0);
      expect(Math.abs(ones - expected)).toBeLessThan(5 * Math.sqrt(variance));
    }
  });

  it('draws softmax labels in [0, classes) with class frequencies softmax(W a)', () => {
    const classes = 4;
    const p = 3;
    const scenario = scenarioWith(
      { kind: 'softmax', classes },
      { source: 'synthetic', features: p, samplesPerClient: 20_000 },
      1,
    );
    const shard = buildShard(scenario, 0);
    const w = clientMinimizer(scenario.seed, syntheticCentre(scenario.seed, classes * p), 0, 0);
    const counts = new Float64Array(classes);
    const expected = new Float64Array(classes);
    const variance = new Float64Array(classes);
    let outside = 0;
    for (let s = 0; s < shard.sampleCount; s++) {
      const label = shard.targets[s];
      if (!(Number.isInteger(label) && label >= 0 && label < classes)) outside++;
      counts[label]++;
      const a = row(shard, s);
      const logits = Array.from({ length: classes }, (_, c) =>
        dot(w.subarray(c * p, c * p + p), a),
      );
      const top = Math.max(...logits);
      const weights = logits.map((z) => Math.exp(z - top));
      const total = weights.reduce((x, y) => x + y, 0);
      for (let c = 0; c < classes; c++) {
        const q = weights[c] / total;
        expected[c] += q;
        variance[c] += q * (1 - q);
      }
    }
    expect(outside).toBe(0);
    for (let c = 0; c < classes; c++)
      expect(Math.abs(counts[c] - expected[c])).toBeLessThan(5 * Math.sqrt(variance[c]));
  });
});
