// The local prediction for logistic regression, against answers computed independently: the
// Hessian at x* formed from the data rows with ml-matrix, the round map's Jacobian at its fixed
// point formed column by column and decomposed by ml-matrix, and the rate a long in-process run
// actually shows near its limit.
import { describe, expect, it } from 'vitest';
import { readFileSync } from 'node:fs';
import { EigenvalueDecomposition, Matrix } from 'ml-matrix';
import { planFor, runInProcess } from '../../src/engine/in-process-engine.js';
import { predictRun } from '../../src/engine/predict-run.js';
import { buildRoundMap } from '../../src/engine/round-map.js';
import { roundMapLinearization } from '../../src/engine/round-map-jacobian.js';
import { newtonFixedPoint } from '../../src/theory/newton-fixed-point.js';
import { buildAllShards } from '../../src/data/build-shard.js';
import { sigmoid } from '../../src/problem/logistic.js';
import { scenarioFromText } from '../../src/scenario/load-scenario.js';
import type { RoundRecord } from '../../src/engine/round-record.js';

const quickstart = readFileSync('scenarios/quickstart.yaml', 'utf8');

/** Logistic (or another kind) on the quickstart's heterogeneous data, 4 clients, 6 features. */
function logistic(method: string, extra: string[] = [], kind = 'logistic') {
  return scenarioFromText(quickstart, 'quickstart.yaml', [
    `method.name:${method}`,
    `problem.kind:${kind}`,
    'clients.count:4',
    'data.features:6',
    ...extra,
  ]);
}

/** sum_i p_i (1/n_i) sum_s sigma(z_s)(1 - sigma(z_s)) a_s a_s^T + lambda I, from the rows. */
function formedHessian(
  scenario: ReturnType<typeof logistic>,
  weights: Float64Array,
  x: Float64Array,
): Matrix {
  const d = x.length;
  const h = Matrix.eye(d, d).mul(scenario.problem.regularization);
  buildAllShards(scenario).forEach((shard, i) => {
    const rows = new Matrix(shard.sampleCount, d);
    for (let s = 0; s < shard.sampleCount; s++)
      for (let j = 0; j < d; j++) rows.set(s, j, shard.features[s * d + j]);
    const z = rows.mmul(Matrix.columnVector(Array.from(x)));
    const curvature = Array.from({ length: shard.sampleCount }, (_, s) => {
      const p = sigmoid(z.get(s, 0));
      return (weights[i] / shard.sampleCount) * p * (1 - p);
    });
    h.add(rows.transpose().mmul(Matrix.diag(curvature)).mmul(rows));
  });
  return h;
}

/** The round map's Jacobian at its fixed point as an explicit matrix, column j = J e_j. */
function explicitJacobian(method: string, kind = 'logistic') {
  const { plan, theory } = planFor(logistic(method, [], kind));
  const objectives = theory.instance.objectives;
  const roundMap = buildRoundMap(plan, objectives, new Float64Array(plan.dim));
  const fixed = newtonFixedPoint(
    roundMapLinearization(plan, objectives, roundMap.template),
    roundMap.start,
  );
  const n = roundMap.start.length;
  const jacobian = new Matrix(n, n);
  for (let j = 0; j < n; j++) {
    const unit = new Float64Array(n);
    unit[j] = 1;
    const column = fixed.jacobian(unit);
    for (let i = 0; i < n; i++) jacobian.set(i, j, column[i]);
  }
  const evd = new EigenvalueDecomposition(jacobian);
  const moduli = evd.realEigenvalues.map((re, k) => Math.hypot(re, evd.imaginaryEigenvalues[k]));
  return { plan, theory, largestModulus: Math.max(...moduli) };
}

describe('the local prediction for logistic regression', () => {
  it("the objective's Hessian-vector products at x* equal the Hessian formed from the rows", () => {
    const scenario = logistic('gd');
    const { theory } = planFor(scenario);
    const x = theory.optimum.x;
    const h = formedHessian(scenario, theory.instance.weights, x);
    const d = x.length;
    const scale = Math.max(...h.to1DArray().map(Math.abs));
    for (let j = 0; j < d; j++) {
      const unit = new Float64Array(d);
      unit[j] = 1;
      const out = new Float64Array(d);
      theory.instance.global.hessianVector(x, unit, out);
      for (let i = 0; i < d; i++)
        // ml-matrix forms the same sums in another order: agreement to rounding (common practice).
        expect(Math.abs(out[i] - h.get(i, j))).toBeLessThan(1e-13 * scale);
    }
  });

  it.each(['gd', 'fedavg', 'fedlin'])(
    '%s: the Arnoldi spectral radius equals the largest |eigenvalue| of the explicit Jacobian',
    (method) => {
      const { plan, theory, largestModulus } = explicitJacobian(method);
      const prediction = predictRun(plan, theory);
      expect(prediction.kind).toBe('local');
      expect(Math.abs(prediction.spectralRadius! - largestModulus)).toBeLessThan(1e-8);
    },
  );

  it('softmax (3 classes, d = 18), fedavg: the same check of the Arnoldi spectral radius', () => {
    const { plan, theory, largestModulus } = explicitJacobian('fedavg', 'softmax');
    const prediction = predictRun(plan, theory);
    expect(prediction.kind).toBe('local');
    expect(Math.abs(prediction.spectralRadius! - largestModulus)).toBeLessThan(1e-8);
  });

  it('gd: the spectral radius is max |1 - eta lambda_i(H*)|, as J = I - eta H* for one gradient step', () => {
    // gd's step is eta_i = eta (fixed policy) and eta_g = 1: the model's block of J is I - eta H*,
    // the work buffers are overwritten every round (zero columns), so rho(J) = max_i |1 - eta lambda_i|.
    const scenario = logistic('gd', ['method.stepPolicy:fixed']);
    const { plan, theory } = planFor(scenario);
    const h = formedHessian(scenario, theory.instance.weights, theory.optimum.x);
    const eta = plan.methodConfig.stepSize;
    const lambdas = new EigenvalueDecomposition(h).realEigenvalues;
    const expected = Math.max(...lambdas.map((l) => Math.abs(1 - eta * l)));
    const prediction = predictRun(plan, theory);
    expect(Math.abs(prediction.spectralRadius! - expected)).toBeLessThan(1e-8);
    // The limit of gd is x* itself: f - f* contracts by rho^2.
    expect(prediction.rate).toBe(prediction.spectralRadius! * prediction.spectralRadius!);
  });

  it.each(['gd', 'fedavg', 'fedlin'])(
    '%s: a long run shows the predicted local rate near its limit',
    (method) => {
      const scenario = logistic(method, ['run.rounds:600', 'run.target:0']);
      const { plan, theory } = planFor(scenario);
      const prediction = predictRun(plan, theory);
      const records: RoundRecord[] = [];
      runInProcess(scenario, { openRecords: () => ({ append: (r) => records.push(r) }) });
      // |f(x_k) - f(limit)|, the part of f that decays (FedAvg's limit is not x*, and its f
      // may pass below f(limit) on the way).
      const floor = prediction.floor!;
      const excess = records.map((r) => ({
        round: r.round,
        value: Math.abs(r.suboptimality! - floor),
      }));
      const scale = Math.max(Math.abs(theory.optimum.loss), excess[0].value);
      // The last stretch above rounding: f is summed to a few ulps of its scale, so 1e-14 of it
      // is the floor of what can be read, and below 1e-11 of it the run is deep in the local
      // regime, where the transients of the other eigenvalues have died out (common practice).
      const window = excess.filter((e) => e.value >= 1e-14 * scale && e.value <= 1e-11 * scale);
      expect(window.length).toBeGreaterThan(20);
      // The least-squares slope of log |excess| over the window: the measured rate per round.
      const meanRound = window.reduce((sum, e) => sum + e.round, 0) / window.length;
      const meanLog = window.reduce((sum, e) => sum + Math.log(e.value), 0) / window.length;
      let numerator = 0;
      let denominator = 0;
      for (const e of window) {
        numerator += (e.round - meanRound) * (Math.log(e.value) - meanLog);
        denominator += (e.round - meanRound) ** 2;
      }
      const measured = Math.exp(numerator / denominator);
      // Issue 12's acceptance line: |log measured / log predicted - 1| <= 0.05.
      expect(Math.abs(Math.log(measured) / Math.log(prediction.rate!) - 1)).toBeLessThanOrEqual(
        0.05,
      );
    },
  );
});
