// The in-process engine against theory: fixed points, floors, rates and limits. Each check names
// its source; matrices for the reference computations come from ml-matrix.
import { describe, expect, it } from 'vitest';
import { EigenvalueDecomposition, Matrix, inverse } from 'ml-matrix';
import { readFileSync } from 'node:fs';
import { scenarioFromText } from '../../src/scenario/load-scenario.js';
import type { Scenario } from '../../src/scenario/schema.js';
import { runInProcess } from '../../src/engine/in-process-engine.js';
import { buildRunSummary } from '../../src/engine/run-summary.js';
import { predictRun } from '../../src/engine/predict-run.js';
import { buildAllShards } from '../../src/data/build-shard.js';
import { distanceSquared, norm2 } from '../../src/vec/kernels.js';
import { RecordList } from '../support/record-list.js';

const base = `
name: engine-test
seed: 19
problem: {kind: least-squares, regularization: 0.02}
data: {source: synthetic, features: 8, samplesPerClient: {uniform: [30, 60]}, minimizerSpread: 1.0, conditionNumber: 6, noise: 0.1}
clients: {count: 6}
method: {name: fedavg, localSteps: {uniform: [1, 20]}, stepPolicy: inverse-steps}
run: {rounds: 400, target: 0}
`;

function scenario(tweaks: string[] = [], text = base): Scenario {
  return scenarioFromText(text, 'engine-test.yaml', tweaks);
}

function runKept(s: Scenario) {
  const records = new RecordList();
  return { ...runInProcess(s, { openRecords: () => records }), rounds: records.rounds };
}

function summaryOf(s: Scenario) {
  const records = new RecordList();
  const outcome = runInProcess(s, { openRecords: () => records });
  return {
    outcome,
    summary: buildRunSummary(
      outcome,
      records.rounds,
      predictRun(outcome.plan, outcome.theory),
      'in-process',
    ),
  };
}

/** Client Hessians H_i = A_i^T A_i / n_i + lambda I and h_i = A_i^T b_i / n_i, with ml-matrix. */
function quadraticPieces(s: Scenario) {
  const lambda = s.problem.regularization;
  return buildAllShards(s).map((shard) => {
    const a = new Matrix(shard.sampleCount, shard.featureCount);
    for (let r = 0; r < shard.sampleCount; r++)
      for (let c = 0; c < shard.featureCount; c++)
        a.set(r, c, shard.features[r * shard.featureCount + c]);
    const b = Matrix.columnVector(Array.from(shard.targets));
    const h = a.transpose().mmul(b).div(shard.sampleCount);
    const hess = a
      .transpose()
      .mmul(a)
      .div(shard.sampleCount)
      .add(Matrix.eye(shard.featureCount).mul(lambda));
    return { hess, h, n: shard.sampleCount };
  });
}

describe('FedLin keeps x* fixed (FedLin, NeurIPS 2021: x* is a fixed point of its round)', () => {
  for (const [label, tweaks] of [
    ['tau_i from 1 to 50', ['method.localSteps:{uniform: [1, 50]}']],
    [
      'with top-k 10% and error feedback on the uploaded deltas',
      [
        'method.localSteps:{uniform: [1, 50]}',
        'compression.uplink.fields:{delta: {kind: top-k, fraction: 0.1, errorFeedback: true}}',
      ],
    ],
  ] as const) {
    it(label, () => {
      const s = scenario(['method.name:fedlin', 'run.rounds:1', ...tweaks]);
      const first = runInProcess(s, { initialModel: new Float64Array(8) });
      const xStar = first.theory.optimum.x;
      const r = runInProcess(s, { initialModel: Float64Array.from(xStar) });
      expect(Math.sqrt(distanceSquared(r.finalModel, xStar))).toBeLessThanOrEqual(1e-12);
    });
  }
});

describe('heterogeneous least squares, tau_i from 1 to 20', () => {
  for (const name of ['fedlin', 'scaffold']) {
    it(`${name} reaches f - f* <= 1e-12 (exact convergence: FedLin, NeurIPS 2021; SCAFFOLD, ICML 2020)`, () => {
      const { summary } = summaryOf(
        scenario([`method.name:${name}`, 'run.target:1e-12', 'run.rounds:2000']),
      );
      expect(summary.roundsToTarget).not.toBeNull();
      expect(summary.suboptimality.final).toBeLessThanOrEqual(1e-12);
    });
  }
  for (const name of ['fedavg', 'fedprox', 'fednova']) {
    it(`${name} stops at a floor above 1e-6 (objective inconsistency; Pathak and Wainwright, NeurIPS 2020; Wang et al., NeurIPS 2020)`, () => {
      const { summary } = summaryOf(scenario([`method.name:${name}`, 'run.rounds:800']));
      expect(summary.suboptimality.final).toBeGreaterThan(1e-6);
      expect(summary.floor.measured).not.toBeNull();
      expect(summary.floor.measured as number).toBeGreaterThan(1e-6);
    });
  }

  // FedAvg's limit with local GD: x_fa = (sum p_i M_i)^-1 sum p_i M_i x_i*, M_i = I - (I - eta_i H_i)^tau_i
  // (the fixed point of FedAvg's affine round on quadratics; Pathak and Wainwright, NeurIPS 2020,
  // section 3), computed here with ml-matrix from the client data alone.
  it("fedavg's measured limit matches the closed-form fixed point to relative 1e-6", () => {
    const s = scenario(['method.name:fedavg', 'run.rounds:3000']);
    const { outcome } = summaryOf(s);
    const pieces = quadraticPieces(s);
    const eta = outcome.plan.methodConfig.stepSize;
    const p = 8;
    let lhs = Matrix.zeros(p, p);
    let rhs = Matrix.zeros(p, 1);
    pieces.forEach((piece, i) => {
      const tau = outcome.plan.plannedSteps[i];
      const etaI = eta / tau;
      const step = Matrix.eye(p).sub(piece.hess.clone().mul(etaI));
      let power = Matrix.eye(p);
      for (let k = 0; k < tau; k++) power = power.mmul(step);
      const mI = Matrix.eye(p).sub(power);
      const xI = inverse(piece.hess).mmul(piece.h);
      const weight = outcome.plan.weights[i];
      lhs = lhs.add(mI.clone().mul(weight));
      rhs = rhs.add(mI.mmul(xI).mul(weight));
    });
    const xFa = inverse(lhs).mmul(rhs).getColumn(0);
    const err =
      Math.sqrt(distanceSquared(outcome.finalModel, Float64Array.from(xFa))) /
      norm2(Float64Array.from(xFa));
    expect(err).toBeLessThanOrEqual(1e-6);
    expect(
      Math.sqrt(distanceSquared(Float64Array.from(xFa), outcome.theory.optimum.x)),
    ).toBeGreaterThan(1e-3);
  });
});

describe('gd against Nesterov (Introductory Lectures on Convex Optimization, 2004, Thm 2.1.15)', () => {
  it('predicted rate equals max_i (1 - eta lambda_i)^2 over ml-matrix eigenvalues, and the measured rate is at most 1 - mu/L', () => {
    const s = scenario([
      'method.name:gd',
      'method.localSteps:1',
      'method.stepPolicy:fixed',
      'run.rounds:300',
    ]);
    const { outcome, summary } = summaryOf(s);
    const pieces = quadraticPieces(s);
    let hess = Matrix.zeros(8, 8);
    pieces.forEach(
      (piece, i) => (hess = hess.add(piece.hess.clone().mul(outcome.plan.weights[i]))),
    );
    const eigen = new EigenvalueDecomposition(hess).realEigenvalues;
    const eta = outcome.plan.methodConfig.stepSize;
    expect(eta).toBeCloseTo(1 / Math.max(...eigen), 12);
    const expected = Math.max(...eigen.map((l) => (1 - eta * l) ** 2));
    expect(Math.abs((summary.rate.predicted as number) / expected - 1)).toBeLessThanOrEqual(1e-4);
    const mu = Math.min(...eigen);
    const lipschitz = Math.max(...eigen);
    expect(summary.rate.measured as number).toBeLessThanOrEqual(1 - mu / lipschitz);
  });
});

describe('FedSplit with exact proxes (Pathak and Wainwright, NeurIPS 2020, Theorem 1)', () => {
  it('reaches f - f* <= 1e-10 when each prox is solved to a gradient norm of 1e-12', () => {
    // s = 1/sqrt(L mu) is the step the paper's analysis favours (value recalled from memory);
    // L and mu are the scenario's, from the oracle.
    const probe = runInProcess(scenario(['method.name:fedsplit', 'run.rounds:1']));
    const { smoothness, strongConvexity } = probe.theory.constants;
    const s = scenario([
      'method.name:fedsplit',
      `method.stepSize:${1 / Math.sqrt(smoothness * strongConvexity)}`,
      'method.localSteps:5000',
      'method.proxTolerance:1e-12',
      'run.target:1e-10',
      'run.rounds:500',
    ]);
    const { summary } = summaryOf(s);
    expect(summary.suboptimality.final).toBeLessThanOrEqual(1e-10);
  });
});

describe('measured rate beside predicted rate (DESIGN: the spectral radius of the round map)', () => {
  for (const name of ['gd', 'fedavg', 'fedprox', 'fednova', 'scaffold', 'fedlin', 'fedsplit']) {
    it(`${name}: |log(measured)/log(predicted) - 1| <= 0.05`, () => {
      const s = scenario([
        `method.name:${name}`,
        'method.localSteps:{uniform: [1, 10]}',
        'run.rounds:600',
      ]);
      const { summary } = summaryOf(s);
      expect(summary.prediction.available).toBe(true);
      const measured = summary.rate.measured as number;
      const predicted = summary.rate.predicted as number;
      expect(Math.abs(Math.log(measured) / Math.log(predicted) - 1)).toBeLessThanOrEqual(0.05);
    });
  }
});

describe('local steps stay out of FedLin exponent on a common minimizer (FedLin, NeurIPS 2021, matching lower bound)', () => {
  it('|log rate(tau=20)| <= 1.1 |log rate(tau=1)| with inverse-steps', () => {
    const text = readFileSync(
      new URL('../../scenarios/common-minimizer.yaml', import.meta.url),
      'utf8',
    );
    const rate = (tau: number) =>
      summaryOf(scenario([`method.localSteps:${tau}`, 'run.target:0', 'run.rounds:400'], text))
        .summary.rate.measured as number;
    const one = rate(1);
    const twenty = rate(20);
    expect(Math.abs(Math.log(twenty))).toBeLessThanOrEqual(1.1 * Math.abs(Math.log(one)));
  });
});

describe('compression with error feedback', () => {
  it('fedlin with top-k at 10% and error feedback on its gradient exchange still reaches f - f* <= 1e-10', () => {
    const s = scenario([
      'method.name:fedlin',
      'compression.uplink.fields:{gradient: {kind: top-k, fraction: 0.1, errorFeedback: true}}',
      'run.target:1e-10',
      'run.rounds:3000',
    ]);
    const { summary } = summaryOf(s);
    expect(summary.suboptimality.final).toBeLessThanOrEqual(1e-10);
    const dense = summaryOf(
      scenario(['method.name:fedlin', 'run.target:1e-10', 'run.rounds:3000']),
    ).summary;
    expect(summary.bytes.payload.up).toBeLessThan(dense.bytes.payload.up);
  });
});

describe('determinism', () => {
  it('the same scenario and seed give the same final model bit for bit (minibatches, rand-k, partial participation, stragglers)', () => {
    const tweaks = [
      'method.name:scaffold',
      'method.gradient:{minibatch: 8}',
      'method.participation:0.5',
      'compression.uplink.default:{kind: rand-k, fraction: 0.5}',
      'timing.slowdown:{kind: two-class, fraction: 0.34, factor: 5}',
      'timing.jitter:0.2',
      'run.rounds:40',
    ];
    const a = runKept(scenario(tweaks));
    const b = runKept(scenario(tweaks));
    expect(Buffer.from(a.finalModel.buffer).equals(Buffer.from(b.finalModel.buffer))).toBe(true);
    expect(JSON.stringify(a.rounds.map((r) => ({ ...r, wallSeconds: 0 })))).toBe(
      JSON.stringify(b.rounds.map((r) => ({ ...r, wallSeconds: 0 }))),
    );
    const c = runInProcess(scenario([...tweaks.slice(0, -1), 'seed:20', 'run.rounds:40']));
    expect(Buffer.from(a.finalModel.buffer).equals(Buffer.from(c.finalModel.buffer))).toBe(false);
  });
});
